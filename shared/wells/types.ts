/** Shared types of the well-temperature path (depth in m below ground, temperature in °C). */

export type MeasurementKind = 'bht' | 'log' | 'test';

/** One measurement after the schema's unit conversion (shared/schema/features.ts wellMeasurement). */
export interface MeasurementInput {
  depthM: number;
  temperatureC: number;
  kind: MeasurementKind;
  hoursSinceCirculation?: number;
  circulationHours?: number;
}

/** A depth interval of known conductivity (W/m/K), m below ground. */
export interface ConductivityInterval {
  topM: number;
  bottomM: number;
  conductivityWmK: number;
  /** Temperature coefficient b of k(T) = k0/(1 + b·T), T in °C (1/K); 0 or absent = constant. */
  tempCoeffPerK?: number;
  /** Lithology name when the value came from the user's lithology map. */
  lithology?: string;
}

/** How a temperature was turned into a formation-temperature estimate. */
export type CorrectionMethod =
  /** A log or test temperature, taken as the formation temperature. */
  | 'equilibrium'
  /** Horner extrapolation of three or more BHTs at one depth. */
  | 'horner'
  /** A BHT used as read (no correction). */
  | 'none'
  /** A BHT plus a constant offset. */
  | 'offset'
  /** A BHT plus a user-supplied depth polynomial. */
  | 'poly'
  /** A BHT plus the depth correction of Harrison et al. (1983) (shared/heatflow/bht-empirical.ts). */
  | 'harrison1983'
  /** A BHT corrected by time since circulation and depth, Waples, Pacheco & Vera (2004). */
  | 'waples2004';

/** The user's choice for BHTs that cannot be Horner-corrected. */
export type BhtCorrection =
  | { method: 'none'; sdC?: number }
  | { method: 'offset'; offsetC: number; sdC?: number; source?: string }
  /** ΔT (°C) = Σ coefficients[i]·zKm^i, z the depth below ground in km; `source` names where the coefficients come from. */
  | { method: 'poly'; coefficients: number[]; source: string; sdC?: number }
  /** A published empirical correction (shared/heatflow/bht-empirical.ts); waples2004 needs hoursSinceCirculation and a surface temperature. */
  | { method: 'harrison1983' | 'waples2004'; sdC?: number };

/** A flag raised on a measurement or a well. Codes are stable (tests and the client read them). */
export interface WellFlag {
  code: string;
  message: string;
}

/** A corrected temperature point entering the gradient fit. */
export interface CorrectedPoint {
  /** Indices of the source measurements (several for a Horner group). */
  sources: number[];
  depthM: number;
  /** Raw temperature (°C): the measurement, or the warmest BHT of a Horner group. */
  rawTemperatureC: number;
  temperatureC: number;
  /** One standard deviation of the corrected temperature (°C). */
  sdC: number;
  kind: MeasurementKind;
  method: CorrectionMethod;
  /** Measurement-level flag codes. */
  flags: string[];
  /** False when the point is left out of the gradient fit (see `flags`). */
  used: boolean;
}
