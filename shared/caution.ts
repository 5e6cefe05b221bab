/**
 * The caution every screen and export carries. One text, used everywhere, so they never drift apart.
 */
export const CAUTION =
  'Screening estimates only, from steady-state conductive models (no fluid advection, no transients). ' +
  'Not a basis for drilling, well design or pressure control. ' +
  'Defer to local regulations and licensed professionals.';

export const CAUTION_SHORT = 'Screening estimates only — not for drilling, well design or pressure control.';
