import { parseArgs, type ParseArgsConfig } from 'node:util';
import { InputError, type InputProblem } from '../../shared/errors.ts';

/** The options of the verb being run (for naming them in errors). */
let verbOptions = new Set<string>();

export type OptionSpec = NonNullable<ParseArgsConfig['options']>;

/** Options every verb takes. */
export const COMMON_OPTIONS = {
  json: { type: 'boolean', default: false },
  help: { type: 'boolean', short: 'h', default: false },
} as const satisfies OptionSpec;

/** The words of a space-separated string literal type, as a union: `Words<'a b'>` is `'a' | 'b'`. */
type Words<S extends string> = S extends `${infer A} ${infer B}` ? A | Words<B> : S;

/**
 * Options that each take one string, named in one space-separated list: `textOptions('model seed')` is
 * `{ model: { type: 'string' }, seed: { type: 'string' } }` (a verb's table names them once, not a line each).
 */
export function textOptions<const S extends string>(names: S): { [K in Words<S>]: { type: 'string' } } {
  return Object.fromEntries(names.split(' ').map((n) => [n, { type: 'string' }])) as { [K in Words<S>]: { type: 'string' } };
}

/**
 * Parses a verb's arguments strictly: an unknown option or a missing value is an InputError (exit 2), not a crash.
 */
export function parseVerbArgs<O extends OptionSpec>(verb: string, argv: string[], options: O) {
  verbOptions = new Set(Object.keys(options));
  try {
    return parseArgs({ args: argv, options: { ...COMMON_OPTIONS, ...options }, strict: true, allowPositionals: false });
  } catch (e) {
    const message = e instanceof Error ? e.message : String(e);
    throw new InputError(`${verb}: ${message}`, [{ problem: message }], 'bad_option');
  }
}

/** A finite number from an option string, or an InputError naming the option. */
export function numberOption(name: string, raw: string | undefined, fallback?: number): number {
  if (raw === undefined) {
    if (fallback === undefined) throw new InputError(`--${name} is required`, [{ field: name, problem: 'missing' }], 'bad_option');
    return fallback;
  }
  const v = Number(raw);
  if (raw.trim() === '' || !Number.isFinite(v)) {
    throw new InputError(`--${name} must be a finite number, got "${raw}"`, [{ field: name, problem: `expected a number, got "${raw}"` }], 'bad_option');
  }
  return v;
}

/** A comma-separated list of finite numbers, e.g. `--isotherms 300,500`. */
export function numberListOption(name: string, raw: string | undefined, fallback: number[]): number[] {
  if (raw === undefined) return fallback;
  const parts = raw
    .split(',')
    .map((s) => s.trim())
    .filter((s) => s.length > 0);
  if (parts.length === 0) throw new InputError(`--${name} is empty`, [{ field: name, problem: 'expected a comma-separated list of numbers' }], 'bad_option');
  return parts.map((p) => numberOption(name, p));
}

/** Request members whose flag is not their kebab-case spelling. */
const FLAG_ALIASES: Record<string, string> = {
  heatFlowMWm2: 'heat-flow',
  isothermsC: 'isotherms',
  surfaceTemperatureC: 'surface-temp-c',
};

/**
 * The flag of the running verb that sets a request member (`lagKm` → `--lag-km`), or undefined when the verb has no
 * such option. Members of a feature (a detail with `feature`) are data, never flags.
 */
export function flagOf(field: string | undefined): string | undefined {
  if (field === undefined) return undefined;
  const kebab = FLAG_ALIASES[field] ?? field.replace(/[A-Z]/g, (c) => `-${c.toLowerCase()}`);
  if (verbOptions.has(kebab)) return `--${kebab}`;
  return verbOptions.has(field) ? `--${field}` : undefined;
}

/**
 * An InputError in the CLI's words: each detail that names a request member the verb sets by a flag gets
 * `option: '--flag'`, and a message that starts with that member's name starts with the flag instead.
 */
export function cliProblem(e: InputError): { message: string; details: (InputProblem & { option?: string })[] } {
  let message = e.message;
  const details = e.details.map((d) => {
    const option = d.feature === undefined ? flagOf(d.field) : undefined;
    if (option === undefined) return d;
    if (d.field !== undefined && (message.startsWith(`${d.field} `) || message.startsWith(`${d.field}:`))) message = option + message.slice(d.field.length);
    return { ...d, option };
  });
  return { message, details };
}
