/**
 * Stable Al₂SiO₅ polymorph (kyanite, andalusite, sillimanite) from three straight reaction lines through a triple
 * point. Triple points: Holdaway (1971) 501 °C, 3.76 kbar [checked]; Pattison (1992) about 550 °C, 4.5 kbar [from
 * memory]. Slopes are representative values from memory, not taken from either paper, and used for both
 * calibrations: Ky = And +12 bar/°C, And = Sil −15 bar/°C, Ky = Sil +19.6 bar/°C. Points near a line are uncertain.
 */

export type Aluminosilicate = 'kyanite' | 'andalusite' | 'sillimanite';
export type AluminosilicateCalibration = 'holdaway1971' | 'pattison1992';

export const ALUMINOSILICATE_TRIPLE_POINTS: Readonly<Record<AluminosilicateCalibration, { temperatureC: number; pressureKbar: number; source: string }>> = {
  holdaway1971: { temperatureC: 501, pressureKbar: 3.76, source: 'Holdaway (1971), 501 ± 20 °C, 3.76 kbar' },
  pattison1992: { temperatureC: 550, pressureKbar: 4.5, source: 'Pattison (1992), about 550 °C, 4.5 kbar (from memory)' },
};

/** Reaction-line slopes, kbar/°C (12, −15, 19.6 bar/°C). */
export const ALUMINOSILICATE_SLOPES_KBAR_PER_C = { kyaniteAndalusite: 0.012, andalusiteSillimanite: -0.015, kyaniteSillimanite: 0.0196 } as const;

export interface AluminosilicateResult {
  polymorph: Aluminosilicate;
  /** Pressure distance (kbar) to the nearest reaction line bounding the field at this temperature. */
  distanceKbar: number;
  /** True within 0.5 kbar of a line (about ±20–40 °C): the calibrations and slopes are uncertain there. */
  nearBoundary: boolean;
}

/** Pressure (kbar) of each reaction line at temperature t (°C) for a calibration. */
export function aluminosilicateLines(temperatureC: number, calibration: AluminosilicateCalibration = 'holdaway1971') {
  const tp = ALUMINOSILICATE_TRIPLE_POINTS[calibration];
  const dt = temperatureC - tp.temperatureC;
  const s = ALUMINOSILICATE_SLOPES_KBAR_PER_C;
  return {
    kyaniteAndalusiteKbar: tp.pressureKbar + s.kyaniteAndalusite * dt,
    andalusiteSillimaniteKbar: tp.pressureKbar + s.andalusiteSillimanite * dt,
    kyaniteSillimaniteKbar: tp.pressureKbar + s.kyaniteSillimanite * dt,
  };
}

/** The stable polymorph at (temperatureC °C, pressureKbar kbar); calibration default Holdaway (1971). */
export function stableAluminosilicate(
  temperatureC: number,
  pressureKbar: number,
  calibration: AluminosilicateCalibration = 'holdaway1971',
): AluminosilicateResult {
  if (!Number.isFinite(temperatureC) || !Number.isFinite(pressureKbar)) throw new RangeError('temperature and pressure must be finite');
  const tp = ALUMINOSILICATE_TRIPLE_POINTS[calibration];
  const l = aluminosilicateLines(temperatureC, calibration);
  let polymorph: Aluminosilicate;
  let d: number;
  if (temperatureC <= tp.temperatureC) {
    polymorph = pressureKbar >= l.kyaniteAndalusiteKbar ? 'kyanite' : 'andalusite';
    d = Math.abs(pressureKbar - l.kyaniteAndalusiteKbar);
  } else if (pressureKbar >= l.kyaniteSillimaniteKbar) {
    polymorph = 'kyanite';
    d = pressureKbar - l.kyaniteSillimaniteKbar;
  } else if (pressureKbar <= l.andalusiteSillimaniteKbar) {
    polymorph = 'andalusite';
    d = l.andalusiteSillimaniteKbar - pressureKbar;
  } else {
    polymorph = 'sillimanite';
    d = Math.min(l.kyaniteSillimaniteKbar - pressureKbar, pressureKbar - l.andalusiteSillimaniteKbar);
  }
  return { polymorph, distanceKbar: d, nearBoundary: d < 0.5 };
}
