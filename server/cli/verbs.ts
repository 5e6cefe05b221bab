// Each verb registers itself here, one line a verb, loaded lazily (keep one line per verb; add yours below).
import { registerVerb } from './main.ts';

registerVerb('serve', 'start the web map and API server', async () => (await import('./serve.ts')).serve);
registerVerb('wells', 'well temperatures → corrected temperatures, gradients and heat-flow sites', async () => (await import('./wells.ts')).wells);
registerVerb('geotherm', 'steady-state conductive geotherm of one column (isotherms, temperatures, profile)', async () => (await import('./geotherm.ts')).geotherm);
registerVerb('interpolate', 'grid a point field by IDW or ordinary kriging (with variogram, sd and cross-validation)', async () => (await import('./interpolate.ts')).interpolate);
registerVerb('isotherms', 'heat-flow grid + thermal model → isotherm depths, temperatures, facies, solidus, percentiles and contours', async () => (await import('./isotherms.ts')).isotherms);
registerVerb('isograds', 'isograds from grade samples, with misfits, fault offsets and paleo-gradients', async () => (await import('./isograds.ts')).isograds);
registerVerb('heat-in-place', 'volumetric heat in place, recoverable heat and electric power of a heat-flow grid or polygon', async () => (await import('./heat-in-place.ts')).heatInPlace);
registerVerb('simulate', 'conditional simulation of a point field: realizations at points, or mean/sd/P10/P50/P90 grids', async () => (await import('./simulate.ts')).simulate);
