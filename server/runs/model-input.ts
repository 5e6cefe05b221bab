/**
 * A thermal model as the server receives it (shared/schema/model.ts, strict: a misspelt member is an error the
 * uploader sees), rendered as a 422 when invalid; its `name` is kept as the data set's title.
 */
import { InputError } from '../../shared/errors.ts';
import { parseThermalModel, type ThermalModelInput } from '../../shared/schema/model.ts';

/** Validates a model; returns it and its name when it has one. Throws InputError (422). */
export function modelFromJson(raw: unknown, source = 'model'): { model: ThermalModelInput; name: string | null } {
  if (raw === null || typeof raw !== 'object' || Array.isArray(raw)) {
    throw new InputError(`${source}: a thermal model is a JSON object`, [{ feature: 'model', field: '(root)', problem: `expected an object, got ${Array.isArray(raw) ? 'an array' : raw === null ? 'null' : typeof raw}` }], 'invalid_model', 422);
  }
  try {
    const model = parseThermalModel(raw, source);
    return { model, name: typeof model.name === 'string' ? model.name : null };
  } catch (e) {
    if (e instanceof InputError) throw new InputError(e.message, e.details, e.code, 422);
    throw e;
  }
}
