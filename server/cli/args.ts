import { parseArgs, type ParseArgsConfig } from 'node:util';
import { InputError } from '../../shared/errors.ts';

export type OptionSpec = NonNullable<ParseArgsConfig['options']>;

/** Options every verb takes. */
export const COMMON_OPTIONS = {
  json: { type: 'boolean', default: false },
  help: { type: 'boolean', short: 'h', default: false },
} as const satisfies OptionSpec;

/**
 * Parses a verb's arguments strictly: an unknown option or a missing value is an InputError (exit 2), not a crash.
 */
export function parseVerbArgs<O extends OptionSpec>(verb: string, argv: string[], options: O) {
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
  const parts = raw.split(',').map((s) => s.trim()).filter((s) => s.length > 0);
  if (parts.length === 0) throw new InputError(`--${name} is empty`, [{ field: name, problem: 'expected a comma-separated list of numbers' }], 'bad_option');
  return parts.map((p) => numberOption(name, p));
}
