/**
 * One error type for every mistake that is the caller's fault (bad input, bad option, bad file).
 * It says what went wrong and where, in the words of the data: a problem `code` (a stable snake_case name), a
 * message, and `details` naming the feature (index or id), the field (a property or request member, never a
 * command-line flag) and what was expected. How it is shown is the edge's business: the HTTP layer maps the code to
 * a status (server/http-status.ts), the CLI maps field names to its flags and exits with code 2 (server/cli/main.ts).
 */
export interface InputProblem {
  /** Feature index or id, or a layer index/name, when the problem belongs to one. */
  feature?: number | string;
  /** Property or request member, e.g. `heatFlowMWm2`, `layers[1].bottomKm` or `power`. */
  field?: string;
  /** What is wrong and what was expected. */
  problem: string;
}

export class InputError extends Error {
  /** Stable problem code, e.g. `invalid_model`, `invalid_features`, `not_found`. */
  readonly code: string;
  readonly details: InputProblem[];

  constructor(message: string, details: InputProblem[] = [], code = 'invalid_input') {
    super(message);
    this.name = 'InputError';
    this.code = code;
    this.details = details;
  }
}

export function isInputError(e: unknown): e is InputError {
  return e instanceof InputError;
}

/**
 * An InputError for a list of problems: the message is `lead` and the first three as `feature field: problem`
 * (joined by "; "); the details keep the first 50.
 */
export function problemsError(lead: string, problems: InputProblem[], code: string): InputError {
  const shown = problems
    .slice(0, 3)
    .map((p) => `${p.feature} ${p.field}: ${p.problem}`)
    .join('; ');
  return new InputError(`${lead}: ${shown}`, problems.slice(0, 50), code);
}
