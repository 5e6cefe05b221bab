import { InputError } from '../../shared/errors.ts';
import { parseFeatureCollection, type FaultCollection, type SampleCollection } from '../../shared/schema/features.ts';
import { isogradLayer } from '../../shared/structure/layer.ts';
import { ZONE_COLORS } from '../../shared/grid/ramps.ts';
import { compileModel, nominalModel } from '../../shared/thermal/index.ts';
import { withMethod } from '../../shared/products/provenance.ts';
import { geojsonText } from '../io/export.ts';
import type { ExtraLayerStage, RunLayer } from './pipeline.ts';

/**
 * The isograd stage of a run: when the request names a samples data set, isograd lines from the grade samples
 * (with the run's faults as barriers) become the `isograds` vector layer, and the isograd and fault report goes
 * into the run summary under `structure`. The request's `isogradDipDeg` gives the separations their dip-slip
 * component on faults with a dip and dip direction.
 */
export const isogradStage: ExtraLayerStage = {
  name: 'isograds',
  weight: 8,
  run(ctx, progress): RunLayer[] {
    const { request, datasets } = ctx;
    if (request.samples === undefined) return [];
    const samplesDs = datasets[request.samples];
    if (!samplesDs) throw new InputError(`data set "${request.samples}" not found`, [{ field: 'samples', problem: 'not found' }], 'not_found');
    if (samplesDs.kind !== 'samples')
      throw new InputError(
        `data set "${request.samples}" holds ${samplesDs.kind}, not samples`,
        [{ field: 'samples', problem: `kind ${samplesDs.kind}` }],
        'wrong_kind',
      );
    progress(0, 'isograds: reading the grade samples');
    const samples = parseFeatureCollection('samples', JSON.parse(samplesDs.body)).collection as SampleCollection;
    const faultsDs = request.faults !== undefined ? datasets[request.faults] : undefined;
    const faults = faultsDs ? (parseFeatureCollection('faults', JSON.parse(faultsDs.body)).collection as FaultCollection) : null;
    progress(0.1, 'isograds: indicator surfaces and fault report');
    const model = compileModel(nominalModel(ctx.model), { maxDepthKm: request.maxDepthKm ?? 60 });
    const layer = isogradLayer(samples, faults, { model, heatFlowMWm2: undefined, isogradDipDeg: request.isogradDipDeg });
    for (const w of layer.report.warnings) ctx.warnings.push(`isograds: ${w}`);
    ctx.summary.structure = {
      isograds: layer.report.isograds,
      faults: layer.report.faults,
      samples: layer.report.samples,
      misfits: layer.report.misfits,
      paleoGradients: layer.report.paleoGradients,
      method: layer.report.method,
    };
    const provenance = withMethod(ctx.provenance, `isograds: ${layer.report.method.indicator}`);
    const text = geojsonText(layer.lines, provenance);
    progress(1, 'isograds done');
    const ranks = Object.entries(ZONE_COLORS).slice(1);
    return [
      {
        info: {
          name: 'isograds',
          kind: 'vector',
          units: '',
          title: 'Isograds (higher grade on the right of each line)',
          legend: { type: 'classes', units: 'zone boundary', classes: ranks.map(([zone, color], i) => ({ value: i + 1, label: `${zone}-in`, color })) },
          formats: ['geojson'],
        },
        files: [{ ext: 'geojson', bytes: new TextEncoder().encode(text) }],
      },
    ];
  },
};
