/**
 * The one reader of thermal-model documents, used by every way in (CLI verbs, HTTP routes, the run worker): the
 * model contract of shared/schema/model.ts, strict. A member the contract does not know (a misspelt
 * `surfaceHeatFlow`, an extra `colour`) is an InputError with code `invalid_model` whose detail names that member
 * as its field, whichever way the model came in.
 */
import { InputError } from '../errors.ts';
import { parseThermalModel, type ThermalModelInput } from '../schema/model.ts';

export interface ModelDocument {
  model: ThermalModelInput;
  /** The document's `name` when it has one (kept for provenance and as a data set's title). */
  name: string | null;
}

/** Validates a parsed model document; `source` names it in messages (a file name or data set id). */
export function parseModelDocument(raw: unknown, source = 'model'): ModelDocument {
  const model = parseThermalModel(raw, source);
  return { model, name: typeof model.name === 'string' ? model.name : null };
}

/** Parses model JSON text (a file or a stored data set) and validates it as above. */
export function parseModelText(text: string, source = 'model'): ModelDocument {
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch (e) {
    throw new InputError(
      `${source}: not valid JSON: ${e instanceof Error ? e.message : String(e)}`,
      [{ feature: 'model', field: '(root)', problem: 'not valid JSON' }],
      'invalid_model',
    );
  }
  return parseModelDocument(raw, source);
}
