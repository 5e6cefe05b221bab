// The well-temperature path: corrections, gradients, conductivity, heat flow, model check, views data.
export * from './types.ts';
export * from './linear-fit.ts';
export * from './horner.ts';
export * from './correction.ts';
export * from './gradient.ts';
export * from './conductivity.ts';
export * from './bullard.ts';
export * from './quality.ts';
export * from './model-check.ts';
export * from './model-adapter.ts';
export * from './checks.ts';
export * from './intervals-csv.ts';
export * from './analyze.ts';
export * from './analyze-all.ts';
export * from './sites.ts';
