// Heat-flow corrections: paleoclimate, topography, empirical BHT corrections, per-site reports (re-exports only).
export * from './erfc.ts';
export * from './paleoclimate.ts';
export * from './topography.ts';
export * from './bht-empirical.ts';
export * from './corrections.ts';
export * from './sites.ts';
