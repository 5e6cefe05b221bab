#!/usr/bin/env node
// Compiles the command line (server/ and shared/, TypeScript) to JavaScript in dist/cli/ with esbuild, so that
// `subtherm` starts without compiling TypeScript on the fly. `npm run build` runs it; bin/subtherm.mjs runs it on
// the first start after a source changed. Packages stay outside the bundle and load from node_modules.
import { mkdirSync, readdirSync, readFileSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { dirname, join, relative } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

export const ROOT = fileURLToPath(new URL('..', import.meta.url));
export const CLI_DIR = join(ROOT, 'dist', 'cli');
export const CLI_ENTRY = join(CLI_DIR, 'main.mjs');
const STAMP = join(CLI_DIR, 'stamp.json');
const PKG = JSON.parse(readFileSync(join(ROOT, 'package.json'), 'utf8'));
/** Folders whose TypeScript the command line is built from. */
const SOURCE_DIRS = ['server', 'shared'];

/** Newest modification time (ms) and number of files under the source folders. */
function sourceState() {
  let newestMs = 0;
  let files = 0;
  const walk = (dir) => {
    for (const e of readdirSync(dir, { withFileTypes: true })) {
      const p = join(dir, e.name);
      if (e.isDirectory()) walk(p);
      else {
        files++;
        newestMs = Math.max(newestMs, statSync(p).mtimeMs);
      }
    }
  };
  for (const d of SOURCE_DIRS) walk(join(ROOT, d));
  return { newestMs, files };
}

/** True when dist/cli holds a build of the current sources (no source newer, none added or removed since). */
export function cliBuildIsFresh() {
  let stamp;
  try {
    stamp = JSON.parse(readFileSync(STAMP, 'utf8'));
  } catch {
    return false;
  }
  const now = sourceState();
  return now.files === stamp.files && now.newestMs <= stamp.newestMs;
}

/**
 * Each source keeps its own `import.meta.url`: worker files, the fixtures folder and the project root are found
 * relative to the source file, so the bundle refers back to it (the workers still run their TypeScript under tsx).
 */
const keepModuleUrls = {
  name: 'keep-module-urls',
  setup(build) {
    build.onLoad({ filter: /\.ts$/ }, (args) => {
      const text = readFileSync(args.path, 'utf8');
      if (!text.includes('import.meta.url')) return { contents: text, loader: 'ts' };
      const rel = relative(CLI_DIR, args.path).split('\\').join('/');
      return { contents: text.replaceAll('import.meta.url', `new URL(${JSON.stringify(rel)}, import.meta.url).href`), loader: 'ts' };
    });
  },
};

/** Builds dist/cli; writes to a temporary folder first so concurrent starts never see half a build. */
export async function buildCli({ quiet = false } = {}) {
  const { build } = await import('esbuild');
  const before = sourceState();
  const tmp = join(ROOT, 'dist', `.cli-${process.pid}-${Date.now()}`);
  const out = join(tmp, 'cli');
  await build({
    entryPoints: { main: join(ROOT, 'server', 'cli', 'main.ts') },
    outdir: out,
    outExtension: { '.js': '.mjs' },
    bundle: true,
    splitting: true,
    format: 'esm',
    platform: 'node',
    target: 'node20',
    // Packages load from node_modules, except zod: bundled, it is parsed as one file instead of resolving and
    // compiling its many modules at every start (about half the start-up time of a verb).
    external: Object.keys({ ...PKG.dependencies, ...PKG.devDependencies })
      .filter((name) => name !== 'zod')
      .flatMap((name) => [name, `${name}/*`]),
    chunkNames: '[name]-[hash]',
    logLevel: quiet ? 'error' : 'warning',
    plugins: [keepModuleUrls],
  });
  writeFileSync(join(out, 'stamp.json'), JSON.stringify(before) + '\n');
  mkdirSync(dirname(CLI_DIR), { recursive: true });
  const old = join(ROOT, 'dist', `.cli-old-${process.pid}-${Date.now()}`);
  try {
    renameSync(CLI_DIR, old);
  } catch {
    /* no earlier build */
  }
  try {
    renameSync(out, CLI_DIR);
  } catch {
    /* another start finished the same build first */
  }
  rmSync(tmp, { recursive: true, force: true });
  rmSync(old, { recursive: true, force: true });
  if (!quiet) process.stdout.write(`built ${relative(ROOT, CLI_ENTRY)}\n`);
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) await buildCli();
