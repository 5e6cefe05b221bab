import { isInputError } from '../../shared/errors.ts';
import { VERSION } from '../../shared/version.ts';

/** A verb reads its arguments, does its work, prints, and returns the exit code. */
export type Verb = (argv: string[]) => Promise<number>;

/** Verbs load lazily so `subtherm geotherm` never pays for the server's imports. */
const VERBS: Record<string, { summary: string; load: () => Promise<Verb> }> = {};

/** Registers a verb; each verb file adds itself in `verbs.ts`. */
export function registerVerb(name: string, summary: string, load: () => Promise<Verb>): void {
  VERBS[name] = { summary, load };
}

function usage(): string {
  const rows = Object.entries(VERBS).map(([name, v]) => `  ${name.padEnd(14)} ${v.summary}`);
  return [`subtherm ${VERSION}`, '', 'Usage: subtherm <verb> [options] [--json]', '', 'Verbs:', ...rows, '', 'subtherm <verb> --help shows the options of one verb.'].join('\n');
}

/** Runs the CLI; returns the process exit code (0 ok, 2 bad input, 1 internal fault). */
export async function main(argv: string[]): Promise<number> {
  await import('./verbs.ts');
  const [name, ...rest] = argv;
  if (name === undefined || name === '--help' || name === '-h' || name === 'help') {
    process.stdout.write(usage() + '\n');
    return 0;
  }
  if (name === '--version') {
    process.stdout.write(VERSION + '\n');
    return 0;
  }
  const entry = VERBS[name];
  const json = rest.includes('--json');
  if (!entry) {
    return reportUserError(json, `unknown verb "${name}"`, [{ problem: `expected one of: ${Object.keys(VERBS).join(', ')}` }], 'unknown_verb');
  }
  try {
    const verb = await entry.load();
    return await verb(rest);
  } catch (e) {
    if (isInputError(e)) return reportUserError(json, e.message, e.details, e.code);
    const message = e instanceof Error ? (e.stack ?? e.message) : String(e);
    process.stderr.write(`subtherm ${name}: internal error (please report it):\n${message}\n`);
    return 1;
  }
}

function reportUserError(json: boolean, message: string, details: unknown[], code: string): number {
  if (json) process.stdout.write(JSON.stringify({ error: { code, message, details } }) + '\n');
  process.stderr.write(`error: ${message}\n`);
  for (const d of details as { feature?: unknown; field?: unknown; problem?: unknown }[]) {
    const where = [d.feature !== undefined ? `feature ${String(d.feature)}` : '', d.field !== undefined ? `field ${String(d.field)}` : ''].filter(Boolean).join(', ');
    process.stderr.write(`  ${where ? where + ': ' : ''}${String(d.problem ?? '')}\n`);
  }
  return 2;
}
