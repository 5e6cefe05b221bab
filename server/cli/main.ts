import { isInputError, type InputProblem } from '../../shared/errors.ts';
import { VERSION } from '../../shared/version.ts';
import { cliProblem } from './args.ts';
import { VERBS } from './verbs.ts';

export type { Verb } from './verbs.ts';

function usage(): string {
  const rows = Object.entries(VERBS).map(([name, v]) => `  ${name.padEnd(14)} ${v.summary}`);
  return [
    `subtherm ${VERSION}`,
    '',
    'Usage: subtherm <verb> [options] [--json]',
    '',
    'Verbs:',
    ...rows,
    '',
    'subtherm <verb> --help shows the options of one verb.',
  ].join('\n');
}

/** Runs the CLI; returns the process exit code (0 ok, 2 bad input, 1 internal fault). */
export async function main(argv: string[]): Promise<number> {
  const [name, ...rest] = argv;
  if (name === undefined || name === '--help' || name === '-h' || name === 'help') {
    process.stdout.write(usage() + '\n');
    return 0;
  }
  if (name === '--version') {
    process.stdout.write(VERSION + '\n');
    return 0;
  }
  const entry = Object.hasOwn(VERBS, name) ? VERBS[name] : undefined;
  const json = rest.includes('--json');
  if (!entry) {
    return reportUserError(json, `unknown verb "${name}"`, [{ problem: `expected one of: ${Object.keys(VERBS).join(', ')}` }], 'unknown_verb');
  }
  try {
    const verb = await entry.load();
    return await verb(rest);
  } catch (e) {
    if (isInputError(e)) {
      const { message, details } = cliProblem(e);
      return reportUserError(json, message, details, e.code);
    }
    const message = e instanceof Error ? (e.stack ?? e.message) : String(e);
    process.stderr.write(`subtherm ${name}: internal error (please report it):\n${message}\n`);
    return 1;
  }
}

function reportUserError(json: boolean, message: string, details: (InputProblem & { option?: string })[], code: string): number {
  if (json) process.stdout.write(JSON.stringify({ error: { code, message, details } }) + '\n');
  process.stderr.write(`error: ${message}\n`);
  for (const d of details) {
    const field = d.option ?? d.field;
    const where = [d.feature !== undefined ? `feature ${String(d.feature)}` : '', field !== undefined ? `field ${field}` : ''].filter(Boolean).join(', ');
    process.stderr.write(`  ${where ? where + ': ' : ''}${d.problem}\n`);
  }
  return 2;
}
