/**
 * `--trend` as `interpolate` and `simulate` read it: none|linear|quadratic|auto (drift.ts), or `drift:G.tif`, kriging
 * with an external drift whose covariate is the single-band GeoTIFF G.tif (e.g. sediment thickness), or
 * `auto:drift:G.tif`, auto choosing among the polynomial drifts and that external one by leave-one-out RMSE.
 */
import { readFile } from 'node:fs/promises';
import { basename } from 'node:path';
import { InputError } from '../../shared/errors.ts';
import { parseTrendOption } from '../../shared/schema/interp.ts';
import type { DriftKind } from '../../shared/interp/drift.ts';
import type { ExternalDriftGrid } from '../../shared/interp/externalDrift.ts';
import { driftGridFromBytes } from '../io/grid-dataset.ts';
import { sha256 } from './point-input.ts';

export interface TrendChoice {
  trend: DriftKind | 'auto';
  /** The covariate grid of an external drift, or null. */
  externalDrift: ExternalDriftGrid | null;
  /** SHA-256 of the drift grid file, or null. */
  sha256: string | null;
}

const DRIFT_FORM = /^(auto:)?drift:(.+)$/i;

/** True when the value names a drift grid (drift:G.tif or auto:drift:G.tif). */
export const namesDriftGrid = (raw: string | undefined): boolean => raw !== undefined && DRIFT_FORM.test(raw.trim());

/** Parses --trend, reading the drift grid when it names one. */
export async function trendOption(raw: string | undefined): Promise<TrendChoice> {
  const m = DRIFT_FORM.exec(raw?.trim() ?? '');
  if (m === null) return { trend: parseTrendOption(raw), externalDrift: null, sha256: null };
  const path = m[2];
  const bytes = await readFile(path).catch((e: NodeJS.ErrnoException) => {
    throw new InputError(`cannot read the drift grid ${path}`, [{ field: 'trend', problem: e.code ?? String(e) }], 'file_not_found');
  });
  return { trend: m[1] ? 'auto' : 'external', externalDrift: await driftGridFromBytes(bytes, basename(path)), sha256: sha256(bytes) };
}
