/**
 * A thermal model as the server receives it: the model JSON of shared/schema/model.ts, optionally with a
 * top-level `name` and `description` (labels for people, as in the demo model). The labels are taken off before
 * the strict schema validates the rest.
 */
import { InputError } from '../../shared/errors.ts';
import { parseThermalModel, type ThermalModelInput } from '../../shared/schema/model.ts';

const LABELS = ['name', 'description'] as const;

/** Validates a model; returns it (labels removed) and its name when it has one. Throws InputError (422). */
export function modelFromJson(raw: unknown, source = 'model'): { model: ThermalModelInput; name: string | null } {
  let name: string | null = null;
  let body = raw;
  if (raw !== null && typeof raw === 'object' && !Array.isArray(raw)) {
    const copy = { ...(raw as Record<string, unknown>) };
    for (const k of LABELS) {
      if (typeof copy[k] === 'string') {
        if (k === 'name') name = (copy[k] as string).slice(0, 200);
        delete copy[k];
      }
    }
    body = copy;
  } else {
    throw new InputError(`${source}: a thermal model is a JSON object`, [{ feature: 'model', field: '(root)', problem: `expected an object, got ${Array.isArray(raw) ? 'an array' : raw === null ? 'null' : typeof raw}` }], 'invalid_model', 422);
  }
  try {
    return { model: parseThermalModel(body, source), name };
  } catch (e) {
    if (e instanceof InputError) throw new InputError(e.message, e.details, e.code, 422);
    throw e;
  }
}
