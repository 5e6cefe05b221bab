// The CLI's verbs, one line a verb, each loaded lazily so `subtherm geotherm` never pays for the server's imports.

/** A verb reads its arguments, does its work, prints, and returns the exit code. */
export type Verb = (argv: string[]) => Promise<number>;

export interface VerbEntry {
  summary: string;
  load: () => Promise<Verb>;
}

export const VERBS: Record<string, VerbEntry> = {
  serve: { summary: 'start the web map and API server', load: async () => (await import('./serve.ts')).serve },
  worker: {
    summary: 'take runs from the shared Redis run queue and run them (beside servers started with --queue-url)',
    load: async () => (await import('./worker.ts')).worker,
  },
  migrate: { summary: 'create or update the database schema (SQLite file or PostgreSQL) and exit', load: async () => (await import('./migrate.ts')).migrate },
  wells: { summary: 'well temperatures → corrected temperatures, gradients and heat-flow sites', load: async () => (await import('./wells.ts')).wells },
  'correct-sites': {
    summary: 'paleoclimatic and topographic corrections of heat-flow sites, with a per-site report',
    load: async () => (await import('./correct-sites.ts')).correctSitesVerb,
  },
  geotherm: {
    summary: 'steady-state conductive geotherm of one column (isotherms, temperatures, profile)',
    load: async () => (await import('./geotherm.ts')).geotherm,
  },
  interpolate: {
    summary: 'grid a point field by IDW or ordinary kriging (with variogram, sd and cross-validation)',
    load: async () => (await import('./interpolate.ts')).interpolate,
  },
  isotherms: {
    summary: 'heat-flow grid + thermal model → isotherm depths, temperatures, facies, solidus, percentiles and contours',
    load: async () => (await import('./isotherms.ts')).isotherms,
  },
  isograds: {
    summary: 'isograds from grade samples, with misfits, fault offsets and paleo-gradients',
    load: async () => (await import('./isograds.ts')).isograds,
  },
  'heat-in-place': {
    summary: 'volumetric heat in place, recoverable heat and electric power of a heat-flow grid or polygon',
    load: async () => (await import('./heat-in-place.ts')).heatInPlace,
  },
  simulate: {
    summary: 'conditional simulation of a point field: realizations at points, or mean/sd/P10/P50/P90 grids',
    load: async () => (await import('./simulate.ts')).simulate,
  },
};
