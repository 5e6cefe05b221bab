import type { ConductivityInterval } from './types.ts';

/** One interval of a lithology column (m below ground). */
export interface LithologyInterval {
  topM: number;
  bottomM: number;
  lithology: string;
}

/** The key a lithology name is looked up by: trimmed, lower case (so "Shale" and "shale " match). */
export function lithologyKey(name: string): string {
  return name.trim().toLowerCase();
}

/**
 * Maps a lithology column to conductivities with the user's map { lithology: conductivityWmK }. Returns the
 * column and the names missing from the map (the caller reports them; nothing is guessed).
 */
export function columnFromLithology(column: LithologyInterval[], map: Record<string, number>): { column: ConductivityInterval[]; missing: string[] } {
  const byKey = new Map<string, number>();
  for (const [k, v] of Object.entries(map)) byKey.set(lithologyKey(k), v);
  const missing = new Set<string>();
  const out: ConductivityInterval[] = [];
  for (const c of column) {
    const k = byKey.get(lithologyKey(c.lithology));
    if (k === undefined) missing.add(c.lithology);
    else out.push({ topM: c.topM, bottomM: c.bottomM, conductivityWmK: k, lithology: c.lithology });
  }
  return { column: out, missing: [...missing] };
}

/**
 * Problems with a column's intervals (empty when fine): each needs finite top ≥ 0, bottom > top and k > 0, and
 * after sorting by top no two may overlap (gaps are allowed and reported as partial coverage where they matter).
 */
export function columnProblems(column: { topM: number; bottomM: number; conductivityWmK?: number }[]): { index: number; problem: string }[] {
  const problems: { index: number; problem: string }[] = [];
  column.forEach((c, i) => {
    if (!(c.topM >= 0) || !Number.isFinite(c.topM)) problems.push({ index: i, problem: `topM must be a depth ≥ 0 m, got ${c.topM}` });
    if (!(c.bottomM > c.topM) || !Number.isFinite(c.bottomM))
      problems.push({ index: i, problem: `bottomM must be below topM (${c.topM} m), got ${c.bottomM}` });
    if (c.conductivityWmK !== undefined && (!(c.conductivityWmK > 0) || !Number.isFinite(c.conductivityWmK)))
      problems.push({ index: i, problem: `conductivityWmK must be > 0, got ${c.conductivityWmK}` });
  });
  const order = column.map((_, i) => i).sort((a, b) => column[a].topM - column[b].topM);
  for (let k = 1; k < order.length; k++) {
    const prev = column[order[k - 1]];
    const cur = column[order[k]];
    // Touching intervals share a boundary; overlap beyond 1 mm is an error.
    if (cur.topM < prev.bottomM - 1e-3)
      problems.push({ index: order[k], problem: `interval ${cur.topM}–${cur.bottomM} m overlaps interval ${order[k - 1]} (${prev.topM}–${prev.bottomM} m)` });
  }
  return problems;
}

/** The column sorted by top depth (a copy). */
export function sortColumn(column: ConductivityInterval[]): ConductivityInterval[] {
  return [...column].sort((a, b) => a.topM - b.topM);
}

/** Thermal resistance (m²K/W) of the part of interval `c` between depths a < b (m), with k(T) = k0/(1 + b·T)
 * evaluated on a linear temperature profile T(z) = t0 + g·z when given: then 1/k is linear in z and the
 * midpoint rule is exact. */
function pieceResistance(c: ConductivityInterval, a: number, b: number, t0: number, gPerM: number): number {
  const coeff = c.tempCoeffPerK ?? 0;
  const mid = 0.5 * (a + b);
  const factor = coeff === 0 ? 1 : 1 + coeff * (t0 + gPerM * mid);
  return ((b - a) * factor) / c.conductivityWmK;
}

export interface HarmonicMean {
  /** (covered thickness) / Σ Δzᵢ/kᵢ over the covered part of [topM, bottomM] (W/m/K); NaN when nothing is covered. */
  conductivityWmK: number;
  /** Thickness of [topM, bottomM] the column covers (m). */
  coveredM: number;
  /** coveredM / (bottomM − topM); 1 for a zero-thickness interval inside the column. */
  coverage: number;
}

/**
 * Harmonic-mean conductivity of a column over the depth interval [topM, bottomM] (m): the one conductivity that
 * gives the interval its series thermal resistance, k̄ = Σ Δzᵢ / Σ (Δzᵢ/kᵢ) (layers in series; common practice).
 * A temperature-dependent interval (tempCoeffPerK) is evaluated on the line T(z) = t0C + gradientCPerKm·z/1000
 * (optional; without it k = k0). A zero-thickness interval returns the conductivity at that depth.
 * `column` must be sorted by top (sortColumn) and free of overlaps (columnProblems).
 */
export function harmonicMeanConductivity(
  column: ConductivityInterval[],
  topM: number,
  bottomM: number,
  line?: { t0C: number; gradientCPerKm: number },
): HarmonicMean {
  if (!(bottomM >= topM)) throw new RangeError('harmonicMeanConductivity: bottomM must be ≥ topM (m)');
  const t0 = line?.t0C ?? 0;
  const g = (line?.gradientCPerKm ?? 0) / 1000;
  if (bottomM === topM) {
    const c = column.find((c) => c.topM <= topM && topM <= c.bottomM);
    if (!c) return { conductivityWmK: NaN, coveredM: 0, coverage: 0 };
    return { conductivityWmK: c.conductivityWmK / (1 + (c.tempCoeffPerK ?? 0) * (t0 + g * topM)), coveredM: 0, coverage: 1 };
  }
  let covered = 0;
  let resistance = 0;
  for (const c of column) {
    const a = Math.max(c.topM, topM);
    const b = Math.min(c.bottomM, bottomM);
    if (!(b > a)) continue;
    covered += b - a;
    resistance += pieceResistance(c, a, b, t0, g);
  }
  return { conductivityWmK: covered > 0 ? covered / resistance : NaN, coveredM: covered, coverage: covered / (bottomM - topM) };
}

/**
 * Cumulative thermal resistance R(z) = ∫ dz/k (m²K/W) from `originM` down to each depth (m), through a sorted,
 * non-overlapping column; NaN for depths above the origin, below the column, or past a gap in it (R unknown).
 * Temperature-dependent intervals as in harmonicMeanConductivity. Writes into `out` when given.
 */
export function thermalResistance(
  column: ConductivityInterval[],
  originM: number,
  depthsM: ArrayLike<number>,
  line?: { t0C: number; gradientCPerKm: number },
  out?: Float64Array,
): Float64Array {
  const res = out ?? new Float64Array(depthsM.length);
  const t0 = line?.t0C ?? 0;
  const g = (line?.gradientCPerKm ?? 0) / 1000;
  for (let i = 0; i < depthsM.length; i++) {
    const z = depthsM[i];
    if (!(z >= originM)) {
      res[i] = NaN;
      continue;
    }
    let r = 0;
    let reached = originM;
    for (const c of column) {
      if (c.bottomM <= reached) continue;
      if (c.topM > reached + 1e-3 || reached >= z) break; // a gap (beyond 1 mm), or done
      const b = Math.min(c.bottomM, z);
      r += pieceResistance(c, reached, b, t0, g);
      reached = b;
    }
    res[i] = reached >= z - 1e-9 ? r : NaN;
  }
  return res;
}
