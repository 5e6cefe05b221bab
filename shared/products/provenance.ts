/**
 * Provenance of an export (DESIGN.md §6): the tool and its version, the method, the model, and the content hash of
 * the inputs. Hashes are SHA-256 (FIPS 180-4) hex digests computed by the caller (the server, with node:crypto)
 * over the input bytes or over `canonicalJson` of parsed inputs, so equal inputs give equal hashes however their
 * keys were ordered.
 */
import { TOOL_NAME, VERSION } from '../version.ts';

/**
 * Canonical JSON: object keys sorted (by UTF-16 code units), no whitespace, `undefined` members left out,
 * non-finite numbers as null (as JSON.stringify does). Arrays keep their order.
 */
export function canonicalJson(value: unknown): string {
  if (value === null || typeof value !== 'object') {
    const s = JSON.stringify(value);
    return s === undefined ? 'null' : s;
  }
  if (ArrayBuffer.isView(value) && !(value instanceof DataView)) return canonicalJson(Array.from(value as unknown as ArrayLike<number>));
  if (Array.isArray(value)) return `[${value.map((v) => (v === undefined ? 'null' : canonicalJson(v))).join(',')}]`;
  const obj = value as Record<string, unknown>;
  const keys = Object.keys(obj)
    .filter((k) => obj[k] !== undefined)
    .sort();
  return `{${keys.map((k) => `${JSON.stringify(k)}:${canonicalJson(obj[k])}`).join(',')}}`;
}

export interface Provenance {
  tool: string;
  version: string;
  /** What was computed and how, in words (e.g. "depth to the 300 °C isotherm, steady 1-D conduction ..."). */
  method: string;
  /** The validated thermal model (JSON) and the document's name, when there is one. */
  model: unknown;
  modelName?: string | null;
  /** SHA-256 per input (sites, model, faults, regions, heat-flow grid, ...). */
  inputs: Record<string, string>;
  /** SHA-256 of the canonical JSON of { inputs, parameters }: one hash naming the whole computation. */
  contentHash: string;
  /** The parameters that shaped the result (isotherms, depths, grid, realizations, seed, ...). */
  parameters: Record<string, unknown>;
}

/** Assembles a provenance record; `hash` is the caller's SHA-256 of a string (hex). */
export function buildProvenance(
  p: { method: string; model: unknown; modelName?: string | null; inputs: Record<string, string>; parameters: Record<string, unknown> },
  hash: (text: string) => string,
): Provenance {
  return {
    tool: TOOL_NAME,
    version: VERSION,
    method: p.method,
    model: p.model,
    modelName: p.modelName ?? null,
    inputs: p.inputs,
    contentHash: hash(canonicalJson({ inputs: p.inputs, parameters: p.parameters })),
    parameters: p.parameters,
  };
}

/** The same provenance with another method text (one record per product). */
export function withMethod(p: Provenance, method: string): Provenance {
  return { ...p, method };
}
