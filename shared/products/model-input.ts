/**
 * Reading a thermal-model document for the grid products. The model contract (shared/schema/model.ts) is strict
 * but for its descriptive `name` and `description`; any other top-level member a document carries is set aside
 * here — reported, never silently dropped — and the rest is validated by parseThermalModel.
 * Layer-level members are not touched: a misspelt layer field stays an error.
 */
import { InputError } from '../errors.ts';
import { parseThermalModel, type ThermalModelInput } from '../schema/model.ts';

/** The top-level members of the model contract. */
export const MODEL_TOP_LEVEL_KEYS = ['name', 'description', 'surfaceTemperatureC', 'surfaceHeatFlowMWm2', 'layers'] as const;

export interface ModelDocument {
  model: ThermalModelInput;
  /** The document's `name` when it is a string (kept for provenance). */
  name: string | null;
  /** Top-level members left out of the model, in document order. */
  ignoredKeys: string[];
  warnings: string[];
}

/** Validates a parsed model document; `source` names it in messages (a file name or data set id). */
export function parseModelDocument(raw: unknown, source = 'model'): ModelDocument {
  if (raw === null || typeof raw !== 'object' || Array.isArray(raw)) {
    throw new InputError(`${source}: a thermal model must be a JSON object`, [{ feature: 'model', field: '(root)', problem: 'expected an object with surfaceTemperatureC and layers' }], 'invalid_model');
  }
  const obj = raw as Record<string, unknown>;
  const kept: Record<string, unknown> = {};
  const ignoredKeys: string[] = [];
  for (const [k, v] of Object.entries(obj)) {
    if ((MODEL_TOP_LEVEL_KEYS as readonly string[]).includes(k)) kept[k] = v;
    else ignoredKeys.push(k);
  }
  const model = parseThermalModel(kept, source);
  const warnings = ignoredKeys.length > 0 ? [`${source}: top-level member(s) ${ignoredKeys.map((k) => `"${k}"`).join(', ')} are not part of the thermal model and were set aside`] : [];
  return { model, name: typeof obj.name === 'string' ? obj.name : null, ignoredKeys, warnings };
}

/** Parses model JSON text (a file or a stored data set) and validates it as above. */
export function parseModelText(text: string, source = 'model'): ModelDocument {
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch (e) {
    throw new InputError(`${source}: not valid JSON: ${e instanceof Error ? e.message : String(e)}`, [{ feature: 'model', problem: 'not valid JSON' }], 'invalid_model');
  }
  return parseModelDocument(raw, source);
}
