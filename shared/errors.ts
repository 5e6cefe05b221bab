/**
 * One error type for every mistake that is the caller's fault (bad input, bad option, bad file).
 * The CLI prints it and exits with code 2; the HTTP layer renders it as a 4xx JSON error.
 * `details` names where the problem is: the feature (index or id), the field, and what was expected.
 */
export interface InputProblem {
  /** Feature index or id, or a layer index/name, when the problem belongs to one. */
  feature?: number | string;
  /** Property or option name, e.g. `heatFlowMWm2` or `layers[1].bottomKm`. */
  field?: string;
  /** What is wrong and what was expected. */
  problem: string;
}

export class InputError extends Error {
  readonly code: string;
  readonly details: InputProblem[];
  /** HTTP status when rendered by the server (4xx). */
  readonly status: number;

  constructor(message: string, details: InputProblem[] = [], code = 'invalid_input', status = 400) {
    super(message);
    this.name = 'InputError';
    this.code = code;
    this.details = details;
    this.status = status;
  }
}

export function isInputError(e: unknown): e is InputError {
  return e instanceof InputError;
}
