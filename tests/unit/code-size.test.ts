// The size rule: no file in server/, shared/ or client/src over 400 lines and no function over 80 lines, so each file
// holds one product or step and each function one idea a reader can hold. Sizes are measured on the syntax tree (the
// TypeScript compiler API): a function is every function-like node with a body (declarations, methods, accessors,
// constructors, arrow functions and function expressions), from its first to its last line; a file's size is the
// count of its newline-separated lines. Nested functions count on their own and inside the function that holds them.
//
// Two lists name the places allowed over the limits:
// - OVER_LIMIT: today's offenders, waiting to be split along their seams. The list only shrinks: an entry that is no
//   longer over its limit fails the test until it is deleted, so the list stays true.
// - DECLARATIVE: tables written as code (a document or a style given as one literal), each with the reason it stays
//   whole. The test checks that each is still over the limit and that most of its lines are one object or array literal.
import { readdirSync, readFileSync } from 'node:fs';
import { join, relative } from 'node:path';
import ts from 'typescript';
import { describe, expect, it } from 'vitest';

const root = new URL('../..', import.meta.url).pathname;
const MAX_FILE_LINES = 400;
const MAX_FUNCTION_LINES = 80;

/**
 * Files and functions over the limits today. A file is named by its path; a function by its path, a space and its
 * name (an anonymous function by the name of the function around it and "/(anonymous)"). Sizes at the time of
 * listing are in the comments. Delete an entry in the commit that brings it under its limit.
 */
const OVER_LIMIT: readonly string[] = [];

/** Functions over the line limit because they are one declarative table; each with the reason it stays whole. */
const DECLARATIVE: Readonly<Record<string, string>> = {
  'server/routes/openapi.ts openApiDocument': 'the OpenAPI 3.1 document: one object literal of paths and schemas, read top to bottom as the API reference',
  'client/src/style.ts overlayLayers': 'the MapLibre style layers drawn over the base map, in drawing order: one array literal of layer specifications',
};

interface Measured {
  /** Path relative to the repository root, with forward slashes. */
  file: string;
  lines: number;
  /** Functions by key ("path name"); the largest when two share a key. */
  functions: Map<string, { lines: number; largestLiteralLines: number }>;
}

function sourceFiles(dir: string): string[] {
  const out: string[] = [];
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const p = join(dir, e.name);
    if (e.isDirectory()) out.push(...sourceFiles(p));
    else if (e.name.endsWith('.ts') && !e.name.endsWith('.d.ts')) out.push(p);
  }
  return out;
}

/** The name a function is known by: its own, the variable or property it is assigned to, or "" when anonymous. */
function ownName(node: ts.SignatureDeclaration): string {
  if (ts.isConstructorDeclaration(node)) return 'constructor';
  if (node.name) return node.name.getText();
  const p = node.parent;
  if (ts.isVariableDeclaration(p) || ts.isPropertyAssignment(p) || ts.isPropertyDeclaration(p)) return p.name.getText();
  return '';
}

/** Lines of the largest object or array literal inside a node, not counting literals in nested functions. */
function largestLiteralLines(sf: ts.SourceFile, node: ts.Node): number {
  let best = 0;
  const visit = (n: ts.Node): void => {
    if (ts.isObjectLiteralExpression(n) || ts.isArrayLiteralExpression(n)) best = Math.max(best, lineSpan(sf, n));
    ts.forEachChild(n, visit);
  };
  ts.forEachChild(node, visit);
  return best;
}

function lineSpan(sf: ts.SourceFile, n: ts.Node): number {
  return sf.getLineAndCharacterOfPosition(n.getEnd()).line - sf.getLineAndCharacterOfPosition(n.getStart(sf)).line + 1;
}

function measure(path: string): Measured {
  const file = relative(root, path).split('\\').join('/');
  const text = readFileSync(path, 'utf8');
  const sf = ts.createSourceFile(file, text, ts.ScriptTarget.Latest, true);
  const functions = new Map<string, { lines: number; largestLiteralLines: number }>();
  const visit = (n: ts.Node, outer: string): void => {
    let here = outer;
    if (ts.isFunctionLike(n) && 'body' in n && n.body !== undefined) {
      const own = ownName(n);
      here = own !== '' ? own : `${outer === '' ? '' : outer + '/'}(anonymous)`;
      const key = `${file} ${here}`;
      const lines = lineSpan(sf, n);
      const seen = functions.get(key);
      if (seen === undefined || seen.lines < lines) functions.set(key, { lines, largestLiteralLines: largestLiteralLines(sf, n) });
    }
    ts.forEachChild(n, (c) => visit(c, here));
  };
  visit(sf, '');
  return { file, lines: text.split('\n').length, functions };
}

const measured = ['server', 'shared', 'client/src'].flatMap((d) => sourceFiles(join(root, d))).map(measure);
const fileLines = new Map(measured.map((m) => [m.file, m.lines]));
const functionLines = new Map(measured.flatMap((m) => [...m.functions]));

describe('code size', () => {
  it('scans the three source trees', () => {
    expect(measured.length).toBeGreaterThan(100);
    for (const d of ['server/', 'shared/', 'client/src/']) expect(measured.some((m) => m.file.startsWith(d))).toBe(true);
  });

  it(`no file over ${MAX_FILE_LINES} lines unless listed`, () => {
    const over = measured.filter((m) => m.lines > MAX_FILE_LINES && !OVER_LIMIT.includes(m.file)).map((m) => `${m.file} (${m.lines} lines)`);
    expect(over, 'split these files along their seams').toEqual([]);
  });

  it(`no function over ${MAX_FUNCTION_LINES} lines unless listed`, () => {
    const over = [...functionLines]
      .filter(([key, f]) => f.lines > MAX_FUNCTION_LINES && !OVER_LIMIT.includes(key) && !(key in DECLARATIVE))
      .map(([key, f]) => `${key} (${f.lines} lines)`);
    expect(over, 'split these functions into named steps').toEqual([]);
  });

  it('every listed offender still exists and is still over its limit (delete entries that are not)', () => {
    const stale = OVER_LIMIT.filter((entry) => {
      const asFile = fileLines.get(entry);
      if (asFile !== undefined) return asFile <= MAX_FILE_LINES;
      const asFunction = functionLines.get(entry);
      return asFunction === undefined || asFunction.lines <= MAX_FUNCTION_LINES;
    });
    expect(stale, 'remove these entries from OVER_LIMIT').toEqual([]);
    expect(new Set(OVER_LIMIT).size).toBe(OVER_LIMIT.length);
  });

  it('every declarative exception is still over the limit, has a reason and is mostly one literal table', () => {
    for (const [key, reason] of Object.entries(DECLARATIVE)) {
      const f = functionLines.get(key);
      expect(f, `${key} no longer exists`).toBeDefined();
      if (f === undefined) continue;
      expect(f.lines, `${key} is under the limit now: delete its exception`).toBeGreaterThan(MAX_FUNCTION_LINES);
      expect(reason.length).toBeGreaterThan(20);
      expect(f.largestLiteralLines / f.lines, `${key} is no longer mostly one literal`).toBeGreaterThanOrEqual(0.8);
    }
  });
});
