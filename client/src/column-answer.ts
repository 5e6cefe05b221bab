/**
 * The answer of POST /api/column as the page reads it (shared/schema/column.ts is the contract): the profile, the
 * isotherm depths, the melt and mantle limits, the Monte Carlo band; and small readers over it (a profile value at
 * any depth, depth at a pressure, the P50 of an uncertain number).
 */

export interface ColumnPoint {
  depthKm: number;
  /** °C; null where the column is not valid (below the melt onset, or where the heat flow is exhausted). */
  temperatureC: number | null;
  heatFlowMWm2: number | null;
  pressureMPa: number | null;
  facies: string | null;
  faciesApproximate?: boolean;
  /** `conductive`, or `adiabat` below the lithosphere base; null where not valid. */
  regime?: string | null;
  /** Why the point has no temperature (e.g. `melt-onset`), else null. */
  flag?: string | null;
}

/** A crossed solidus as the answer names it. */
export interface SolidusReached {
  layer: string;
  label: string;
  rock?: string;
  curve?: string;
}

/** A layer of the model the column was computed with (at a run's point, the override region's there). */
export interface ColumnLayer {
  name: string;
  topKm: number;
  bottomKm: number;
  rock: string;
  wetSolidus: string;
  drySolidus: string;
}

export interface ColumnAnswer {
  surfaceHeatFlowMWm2?: number;
  heatFlowSdMWm2?: number | null;
  surfaceTemperatureC?: number;
  isothermDepthsKm: Record<string, number | null | { p10: number | null; p50: number | null; p90: number | null }>;
  basalHeatFlowMWm2?: unknown;
  reducedHeatFlowMWm2?: unknown;
  solidusCrossingKm?: { wetSolidus: unknown; meltOnset: unknown };
  meltOnsetKm?: unknown;
  meltOnset?: SolidusReached | null;
  wetSolidus?: SolidusReached | null;
  lithosphereBaseKm?: number | null;
  /** Temperatures are valid from the surface to here (km); `invalidBelow` says why they end there (null: valid throughout). */
  validToKm?: number | null;
  invalidBelow?: string | null;
  profile: ColumnPoint[];
  /** The model's layers top down, with each rock's solidus curves. */
  layers?: ColumnLayer[];
  band?: {
    depthKm: number[];
    temperatureC: { p10: (number | null)[]; p50: (number | null)[]; p90: (number | null)[] };
    isothermDepthsKm?: Record<string, { p10: number | null; p50: number | null; p90: number | null }>;
    realizations?: number;
  } | null;
  warnings?: string[];
  [k: string]: unknown;
}

export type Band = NonNullable<ColumnAnswer['band']>;

/** Depth (km) at a pressure (kbar) along the profile, linear between samples and extrapolated past the ends. */
export function depthAtPressure(profile: ColumnPoint[], pKbar: number): number {
  const pts = profile.filter((p) => p.pressureMPa !== null && Number.isFinite(p.pressureMPa));
  if (pts.length < 2) return NaN;
  for (let i = 1; i < pts.length; i++) {
    const a = pts[i - 1],
      b = pts[i];
    const pa = a.pressureMPa! / 100,
      pb = b.pressureMPa! / 100;
    if (pKbar <= pb || i === pts.length - 1) {
      const t = pb === pa ? 0 : (pKbar - pa) / (pb - pa);
      return a.depthKm + t * (b.depthKm - a.depthKm);
    }
  }
  return NaN;
}

/** Linear interpolation of a profile field at a depth. */
export function profileAt(profile: ColumnPoint[], depthKm: number): ColumnPoint | null {
  if (profile.length === 0) return null;
  const i = profile.findIndex((p) => p.depthKm >= depthKm);
  if (i < 0) return profile[profile.length - 1];
  if (i === 0) return profile[0];
  const a = profile[i - 1],
    b = profile[i];
  const t = (depthKm - a.depthKm) / (b.depthKm - a.depthKm || 1);
  const lerp = (x: number | null, y: number | null) => (x === null || y === null ? null : x + t * (y - x));
  return {
    depthKm,
    temperatureC: lerp(a.temperatureC, b.temperatureC),
    heatFlowMWm2: lerp(a.heatFlowMWm2, b.heatFlowMWm2),
    pressureMPa: lerp(a.pressureMPa, b.pressureMPa),
    facies: t < 0.5 ? a.facies : b.facies,
    faciesApproximate: t < 0.5 ? a.faciesApproximate : b.faciesApproximate,
  };
}

/** The P50 of an uncertain number `{ p10, p50, p90, … }`, or the number itself. */
export function mid(v: unknown): number | null {
  if (v !== null && typeof v === 'object') return (v as { p50: number | null }).p50;
  return typeof v === 'number' ? v : null;
}

/** The P10–P90 band along the profile from the column answer's Monte Carlo (shared/schema/column.ts), or null. */
export function bandOf(c: ColumnAnswer): Band | null {
  const mc = c.monteCarlo as
    { realizations: number; profileTemperatureC: { p10: number | null; p50: number | null; p90: number | null }[] | null } | null | undefined;
  if (!mc || !mc.profileTemperatureC) return null;
  const t = mc.profileTemperatureC;
  return {
    depthKm: c.profile.map((p) => p.depthKm),
    temperatureC: { p10: t.map((s) => s.p10), p50: t.map((s) => s.p50), p90: t.map((s) => s.p90) },
    realizations: mc.realizations,
  };
}

/** An isotherm depth (its P50 when uncertain), km; null when not reached. */
export function isoValue(v: ColumnAnswer['isothermDepthsKm'][string]): number | null {
  if (v === null || v === undefined) return null;
  if (typeof v === 'number') return v;
  return v.p50;
}

/** Depth of the deepest profile point, km (valid or not). */
export function columnDepthKm(c: ColumnAnswer): number {
  return c.profile.length > 0 ? c.profile[c.profile.length - 1].depthKm : 1;
}

/**
 * Where the column stops giving temperatures (km) and why, in words; null when it is valid to its base. Read from
 * the answer's `validToKm` and `invalidBelow` (the melt onset, or heat flow exhausted), else from the profile's flags.
 */
export function invalidFrom(c: ColumnAnswer): { km: number; reason: string } | null {
  const base = columnDepthKm(c);
  let km = typeof c.validToKm === 'number' ? c.validToKm : NaN;
  let why = c.invalidBelow ?? null;
  if (!Number.isFinite(km)) {
    const first = c.profile.find((p) => p.temperatureC === null);
    if (!first) return null;
    km = first.depthKm;
    why = first.flag ?? why;
  }
  if (!(km < base - 1e-9)) return null;
  const reason =
    why === 'melt-onset'
      ? `melt onset${c.meltOnset ? ` (${c.meltOnset.label}, ${c.meltOnset.layer})` : ''}`
      : why === 'heat-flow-exhausted'
        ? 'heat flow exhausted (the model produces more heat than flows in)'
        : why === 'conductivity-undefined'
          ? 'conductivity undefined (1 + b·T ≤ 0)'
          : 'the column is not valid';
  return { km, reason };
}
