/**
 * Worker side of the compute pools (server/runs/compute.ts): one function per kind of task (column, section, heat in
 * place, a run's spread or probability layer, a data set upload, heat-flow corrections, a run's vector GeoPackage,
 * the faults on the paths from an empty cell to its nearest sites).
 * Grids arrive with their values in shared memory (no copy); bodies of data sets arrive as text or bytes and are
 * parsed here, off the request thread. An InputError becomes `{ ok: false, error }` so its code and details survive the thread boundary.
 */
import { InputError, type InputProblem } from '../../shared/errors.ts';
import type { Grid } from '../../shared/grid/grid.ts';
import { parseAreaPolygon, parseHeatInPlaceOptions, parseZonePolygons, reportCsv } from '../../shared/resource/index.ts';
import { parseThermalModel, type ThermalModelInput } from '../../shared/schema/model.ts';
import { assessOnGrid } from '../io/resource-output.ts';
import { computeColumn, type ColumnQuery } from '../../shared/products/column.ts';
import { runGridOf, sampleAtLonLat } from '../runs/grids.ts';
import { computeSection, linesOf, type LineFeature } from '../../shared/products/section.ts';
import { modelZones } from '../runs/zones.ts';
import { realizationsFromRecord, type RunRecord } from '../runs/realizations.ts';
import { HEAT_FLOW_CORRELATION_DEPRECATED } from '../runs/heat-flow-simulation.ts';
import { Piscina } from 'piscina';
import { applyWorkerNiceness } from './priority.ts';
import { renderDerivedLayer, type DerivedLayerQuery } from '../runs/derived-layer.ts';
import { faultPathsOf, type FaultPathsTask } from '../runs/column-reason.ts';
import { parseUploadBytes, utf8, type ParsedUpload, type UploadInput } from '../io/dataset-upload.ts';
import { sha256Hex, vectorsGeoPackage } from '../io/export.ts';
import { geoJsonBbox } from '../store/bbox.ts';
import { correctDataset, type DatasetCorrectionResult, type HeatFlowCorrectionRequest } from '../../shared/heatflow/dataset-corrections.ts';

applyWorkerNiceness();

export interface SectionTask {
  kind: 'section';
  heatFlow: Grid<Float32Array>;
  model: ThermalModelInput;
  /** The run's regions data set (GeoJSON text) when it has one. */
  regionsBody: string | null;
  faultsBody: string | null;
  isogradsText: string | null;
  line: [number, number][];
  maxDepthKm: number;
  samples: number;
  depthSamples: number;
  isothermsC: number[];
}

export interface HeatInPlaceBody {
  polygon?: unknown;
  zones?: unknown;
  zoneProperty?: string;
  options?: Record<string, unknown>;
}

export interface HeatInPlaceTask {
  kind: 'heat-in-place';
  runId: string;
  heatFlow: Grid<Float32Array>;
  heatFlowSd: Grid<Float32Array> | null;
  model: unknown;
  body: HeatInPlaceBody;
  /** The run's record when the job has realizations: they are the run's own (realizationsFromRecord). */
  record: RunRecord | null;
}

/** A spread or probability layer of a finished run, built from the run's record (its realizations are rebuilt here). */
export interface DerivedLayerTask {
  kind: 'derived-layer';
  record: RunRecord;
  query: DerivedLayerQuery;
}

/** Heat-flow corrections of a sites or wells data set (its stored body), with the project's terrain and model. */
export interface CorrectionsTask {
  kind: 'heat-flow-corrections';
  datasetKind: 'sites' | 'wells';
  sourceBody: string;
  request: HeatFlowCorrectionRequest;
  dem: Grid<Float32Array> | null;
  /** The stored body of the request's thermal-model data set, when it names one. */
  modelBody: string | null;
}

/** The corrected sites as a data set ready to store, with the action's reports. */
export type CorrectionsOutput = Omit<DatasetCorrectionResult, 'features'> & { upload: ParsedUpload };

/** Every vector layer of a finished run (GeoJSON text) into one GeoPackage. */
export interface VectorsGeoPackageTask {
  kind: 'vectors-gpkg';
  layers: { name: string; title: string; geojson: string }[];
  provenance: unknown;
}

export type ComputeTask =
  | { kind: 'column'; query: ColumnQuery }
  | SectionTask
  | HeatInPlaceTask
  | DerivedLayerTask
  | { kind: 'upload'; input: UploadInput }
  | CorrectionsTask
  | VectorsGeoPackageTask
  | FaultPathsTask;

export type ComputeReply = { ok: true; value: unknown } | { ok: false; error: { code: string; message: string; details: InputProblem[] } };

/** What a heat-in-place job keeps: the CLI's JSON report and both exports, rendered once. */
export interface HeatInPlaceOutput {
  report: unknown;
  html: string;
  csv: string;
}

export default async function compute(task: ComputeTask): Promise<ComputeReply> {
  try {
    switch (task.kind) {
      case 'column':
        return { ok: true, value: computeColumn(task.query) };
      case 'section':
        return { ok: true, value: await section(task) };
      case 'heat-in-place':
        return { ok: true, value: await heatInPlace(task) };
      case 'derived-layer':
        return { ok: true, value: await renderDerivedLayer(task.record, task.query) };
      case 'upload': {
        const up = await parseUploadBytes(task.input);
        return movingReply(up, up.body);
      }
      case 'heat-flow-corrections': {
        const out = corrections(task);
        return movingReply(out, out.upload.body);
      }
      case 'vectors-gpkg':
        return { ok: true, value: new Uint8Array(vectorsGeoPackage(task.layers, task.provenance)) };
      case 'fault-paths':
        return { ok: true, value: faultPathsOf(task) };
    }
  } catch (e) {
    if (e instanceof InputError) return { ok: false, error: { code: e.code, message: e.message, details: e.details } };
    throw e;
  }
}

/**
 * A reply whose `bytes` move to the request thread instead of being copied: structured cloning a 50 MB body costs
 * the receiving thread about a second, a transfer nothing (`bytes` spans its whole buffer, as utf8() makes it).
 */
function movingReply(value: unknown, bytes: Uint8Array): ComputeReply {
  const reply: ComputeReply = { ok: true, value };
  const moving = { [Piscina.transferableSymbol]: [bytes.buffer], [Piscina.valueSymbol]: reply };
  return Piscina.move(moving as unknown as Parameters<typeof Piscina.move>[0]) as unknown as ComputeReply;
}

function pick(o: Record<string, unknown>, keys: string[]): Record<string, unknown> {
  return Object.fromEntries(keys.filter((k) => o[k] !== undefined).map((k) => [k, o[k]]));
}

async function section(t: SectionTask): Promise<Record<string, unknown>> {
  const faults: LineFeature[] = [];
  if (t.faultsBody !== null) {
    for (const f of (JSON.parse(t.faultsBody) as { features: { id?: string; geometry: unknown; properties: Record<string, unknown> }[] }).features) {
      faults.push({
        id: f.id ?? (f.properties.id as string | undefined),
        properties: pick(f.properties, ['id', 'name', 'kind', 'dipDeg', 'dipDirectionDeg']),
        lines: linesOf(f.geometry),
      });
    }
  }
  const isograds: LineFeature[] = [];
  if (t.isogradsText !== null) {
    try {
      const fc = JSON.parse(t.isogradsText) as { features?: { id?: string; geometry: unknown; properties?: Record<string, unknown> }[] };
      for (const f of fc.features ?? []) isograds.push({ id: f.id, properties: f.properties ?? {}, lines: linesOf(f.geometry) });
    } catch {
      // A run's own layer that does not parse is a server fault; the section is still useful without it.
      console.error(`[${new Date().toISOString()}] a run's isograds layer is not valid GeoJSON`);
    }
  }
  const heatFlow = await runGridOf(t.heatFlow);
  return computeSection({
    heatFlowAt: (lon, lat) => sampleAtLonLat(heatFlow, lon, lat),
    model: t.model,
    modelAt: t.regionsBody !== null ? modelZones(t.model, t.regionsBody) : undefined,
    line: t.line,
    maxDepthKm: t.maxDepthKm,
    samples: t.samples,
    depthSamples: t.depthSamples,
    isothermsC: t.isothermsC,
    faults,
    isograds,
  });
}

async function heatInPlace(t: HeatInPlaceTask): Promise<HeatInPlaceOutput> {
  const body = t.body;
  const options = parseHeatInPlaceOptions(body.options ?? {}, 'options');
  const model = parseThermalModel(t.model, 'run model');
  const polygon = body.polygon !== undefined ? parseAreaPolygon(body.polygon, 'polygon') : undefined;
  const zonePolygons = body.zones !== undefined ? parseZonePolygons(body.zones, body.zoneProperty, 'zones') : undefined;
  const label = (body.polygon as { properties?: { name?: unknown } } | undefined)?.properties?.name;
  // The run's own realizations: its simulated heat-flow fields and its seed (so the model draws are the run's too).
  let heatFlowRealizations: { values: Float32Array; source: string } | undefined;
  let heatFlowSd = t.heatFlowSd ?? undefined;
  const notes: string[] = [];
  if (t.record !== null && options.realizations > 0) {
    const rr = await realizationsFromRecord(t.record, { realizations: options.realizations });
    // Runs made before simulation keep the old per-cell error model with the request's seed.
    if (rr.heatFlowValues !== null) {
      const given = (body.options as { seed?: number } | undefined)?.seed;
      if (given !== undefined && given !== rr.seed)
        notes.push(`the seed ${given} was replaced by the run's seed ${rr.seed}: the realizations are the run's own`);
      options.seed = rr.seed;
      heatFlowRealizations = { values: rr.heatFlowValues, source: rr.source };
      heatFlowSd = undefined;
      if ((body.options as { heatFlowErrorCorrelation?: unknown } | undefined)?.heatFlowErrorCorrelation !== undefined)
        notes.push(HEAT_FLOW_CORRELATION_DEPRECATED);
    }
  }

  const { result, html } = await assessOnGrid({
    heatFlow: t.heatFlow,
    heatFlowSd,
    heatFlowRealizations,
    model,
    modelLabel: model.name,
    polygon,
    polygonLabel: typeof label === 'string' ? label : undefined,
    zonePolygons,
    options,
    inputHashes: { run: t.runId },
  });
  result.report.warnings.unshift(...notes);
  return { report: result.report, html: html(), csv: reportCsv(result.report) };
}

function corrections(t: CorrectionsTask): CorrectionsOutput {
  const source = JSON.parse(t.sourceBody) as { features: unknown[] };
  const model = t.modelBody === null ? undefined : (JSON.parse(t.modelBody) as unknown);
  const { features, ...out } = correctDataset(t.datasetKind, source.features, t.request, t.dem, model);
  const collection = { type: 'FeatureCollection', features };
  const body = utf8(JSON.stringify(collection));
  const upload: ParsedUpload = {
    kind: 'sites',
    body,
    featureCount: features.length,
    warnings: out.warnings,
    suggestedName: null,
    contentHash: sha256Hex(body),
    bbox: geoJsonBbox(collection),
  };
  return { ...out, upload };
}
