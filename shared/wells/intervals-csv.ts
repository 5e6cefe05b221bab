import { InputError, problemsError, type InputProblem } from '../errors.ts';
import { parseCsv } from '../io/csv.ts';
import { columnProblems, type LithologyInterval } from './conductivity.ts';
import type { ConductivityInterval } from './types.ts';
import type { WellInput } from './checks.ts';

/** Per-well depth intervals read from a CSV. */
export interface WellIntervals {
  conductivity: ConductivityInterval[];
  lithology: LithologyInterval[];
}

const FT_TO_M = 0.3048; // international foot, exact

/**
 * Reads a depth-interval CSV for wells whose measurements came as CSV (one row per measurement cannot hold
 * intervals): header `id` (or `wellId`), `topM,bottomM` (or `topFt,bottomFt`), and `conductivityWmK` and/or
 * `lithology`; one row per interval. A row with a conductivity becomes a conductivity interval, a row with only
 * a lithology a lithology interval. Throws InputError naming the row and column.
 */
export function parseIntervalsCsv(text: string, source = 'intervals'): Map<string, WellIntervals> {
  const { header, rows } = parseCsv(text);
  const col = (...names: string[]) => header.findIndex((h) => names.includes(h));
  const idC = col('id', 'wellId');
  const ft = col('topM') < 0 && col('topFt') >= 0;
  const topC = ft ? col('topFt') : col('topM');
  const botC = ft ? col('bottomFt') : col('bottomM');
  const kC = col('conductivityWmK');
  const litC = col('lithology');
  const missing: InputProblem[] = [];
  if (idC < 0) missing.push({ field: 'id', problem: 'missing column (id or wellId)' });
  if (topC < 0) missing.push({ field: 'topM', problem: 'missing column (topM or topFt)' });
  if (botC < 0) missing.push({ field: 'bottomM', problem: 'missing column (bottomM or bottomFt)' });
  if (kC < 0 && litC < 0) missing.push({ field: 'conductivityWmK', problem: 'need a conductivityWmK or a lithology column' });
  if (missing.length > 0)
    throw new InputError(`${source}: ${missing.map((m) => `${m.field}: ${m.problem}`).join('; ')}; header is ${header.join(',')}`, missing, 'malformed_csv');
  const problems: InputProblem[] = [];
  const out = new Map<string, WellIntervals>();
  rows.forEach((r, k) => {
    const row = `row ${k + 1}`;
    const id = r[idC].trim();
    const num = (c: number, name: string) => {
      const s = r[c].trim();
      const v = Number(s);
      if (s === '' || !Number.isFinite(v)) problems.push({ feature: row, field: name, problem: `expected a number, got "${s}"` });
      return v;
    };
    if (id === '') problems.push({ feature: row, field: 'id', problem: 'empty well id' });
    const f = ft ? FT_TO_M : 1;
    const topM = num(topC, header[topC]) * f;
    const bottomM = num(botC, header[botC]) * f;
    const kText = kC >= 0 ? r[kC].trim() : '';
    const lith = litC >= 0 ? r[litC].trim() : '';
    const w = out.get(id) ?? { conductivity: [], lithology: [] };
    if (kText !== '') {
      const k2 = num(kC, 'conductivityWmK');
      if (!(k2 > 0)) problems.push({ feature: row, field: 'conductivityWmK', problem: `must be > 0 W/m/K, got ${kText}` });
      w.conductivity.push({ topM, bottomM, conductivityWmK: k2, lithology: lith || undefined });
    } else if (lith !== '') w.lithology.push({ topM, bottomM, lithology: lith });
    else problems.push({ feature: row, field: 'conductivityWmK', problem: 'the row has neither a conductivity nor a lithology' });
    out.set(id, w);
  });
  if (problems.length > 0) throw problemsError(`${source}: ${problems.length} problem(s)`, problems, 'invalid_features');
  return out;
}

/**
 * Attaches intervals read by parseIntervalsCsv to wells by id. A well id in the CSV that matches no well, or a
 * well that already has a column of the same kind, is an InputError (nothing is merged silently).
 */
export function attachIntervals(wells: WellInput[], intervals: Map<string, WellIntervals>, source = 'intervals'): void {
  const byId = new Map(wells.map((w) => [w.id, w]));
  const problems: InputProblem[] = [];
  for (const [id, iv] of intervals) {
    const w = byId.get(id);
    if (!w) {
      problems.push({ feature: id, field: 'id', problem: `no well with id "${id}" in the wells data` });
      continue;
    }
    if (iv.conductivity.length > 0) {
      if (w.conductivityColumn) problems.push({ feature: id, field: 'conductivityWmK', problem: 'the well already has a conductivityColumn' });
      else w.conductivityColumn = iv.conductivity;
    }
    if (iv.lithology.length > 0) {
      if (w.lithologyColumn) problems.push({ feature: id, field: 'lithology', problem: 'the well already has a lithologyColumn' });
      else w.lithologyColumn = iv.lithology;
    }
    for (const q of columnProblems(iv.conductivity)) problems.push({ feature: id, field: `conductivity interval ${q.index + 1}`, problem: q.problem });
    for (const q of columnProblems(iv.lithology)) problems.push({ feature: id, field: `lithology interval ${q.index + 1}`, problem: q.problem });
  }
  if (problems.length > 0)
    throw new InputError(`${source}: ${problems.map((p) => `well ${p.feature} ${p.field}: ${p.problem}`).join('; ')}`, problems, 'invalid_wells');
}
