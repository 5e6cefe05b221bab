// The OpenAPI 3.1 document (OAS 3.1.0, an open standard) publishes the run contract of shared/schema/run.ts: the run
// summary and the progress and end events, as JSON Schema 2020-12 generated from the zod schemas. The published
// schemas are read here by an independent JSON Schema validator (ajv; the schemas use only keywords that mean the
// same in draft-07, which ajv 6 implements, and in 2020-12, which the test checks first). A real run's summary is
// checked against the published schema in tests/api/server-runs-pipeline.test.ts.
import Ajv from 'ajv';
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { openApiDocument } from '../../server/routes/openapi.ts';
import { parseFeatureCollection, type FaultCollection, type SampleCollection } from '../../shared/schema/features.ts';
import { isogradLayer } from '../../shared/structure/index.ts';

interface Doc {
  components: { schemas: Record<string, Record<string, unknown>> };
  paths: Record<string, { get: { responses: Record<string, { content: Record<string, { schema?: Record<string, unknown> }> }> } }>;
}
const doc = openApiDocument() as Doc;
const schemas = doc.components.schemas;

/** Keywords whose meaning differs between draft-07 and 2020-12 (or that draft-07 lacks). */
const DIALECT_SENSITIVE = ['prefixItems', '$defs', 'dependentSchemas', 'dependentRequired', 'unevaluatedProperties', 'unevaluatedItems', '$dynamicRef'];
function keywords(node: unknown, out = new Set<string>()): Set<string> {
  if (Array.isArray(node)) for (const x of node) keywords(x, out);
  else if (node !== null && typeof node === 'object')
    for (const [k, v] of Object.entries(node)) {
      out.add(k);
      keywords(v, out);
    }
  return out;
}

const ajv = new Ajv({ allErrors: true });
const validate = (name: string, value: unknown) => {
  const v = ajv.compile(schemas[name]);
  return v(value) ? [] : (v.errors ?? []).map((e) => `${e.dataPath} ${e.message ?? ''}`);
};

const progress = { id: 'r1', status: 'running', progress: 0.25, message: 'thermal grids: rows 64 of 256', estimateSeconds: 12 };

describe('OpenAPI: the run contract', () => {
  it('publishes RunSummary, RunProgressEvent and RunEndEvent and refers to them from the run and its events', () => {
    for (const name of ['RunSummary', 'RunProgressEvent', 'RunEndEvent']) expect(schemas[name]).toMatchObject({ type: 'object' });
    const run = doc.paths['/api/runs/{id}'].get.responses['200'].content['application/json'].schema!;
    expect(JSON.stringify(run)).toContain('#/components/schemas/RunSummary');
    const events = doc.paths['/api/runs/{id}/events'].get.responses['200'].content['text/event-stream'].schema!;
    expect(events['x-event-data']).toEqual({ progress: { $ref: '#/components/schemas/RunProgressEvent' }, end: { $ref: '#/components/schemas/RunEndEvent' } });
  });

  it('uses only keywords that draft-07 and 2020-12 read alike', () => {
    for (const name of ['RunSummary', 'RunProgressEvent', 'RunEndEvent'])
      for (const k of DIALECT_SENSITIVE) expect(keywords(schemas[name]).has(k), `${name} uses ${k}`).toBe(false);
  });

  it('the event schemas accept an event of each kind and refuse a wrong status or an unknown field', () => {
    expect(validate('RunProgressEvent', progress)).toEqual([]);
    expect(validate('RunEndEvent', { ...progress, status: 'done', progress: 1, message: 'done' })).toEqual([]);
    expect(validate('RunEndEvent', progress).length).toBeGreaterThan(0);
    expect(validate('RunProgressEvent', { ...progress, percent: 25 }).length).toBeGreaterThan(0);
    expect(validate('RunProgressEvent', { ...progress, progress: 1.5 }).length).toBeGreaterThan(0);
  });

  it('the summary schema names its required parts and refuses keys outside the contract', () => {
    const s = schemas.RunSummary as { required: string[]; additionalProperties: unknown; properties: Record<string, unknown> };
    expect(s.required).toEqual(expect.arrayContaining(['grid', 'interpolation', 'layers', 'provenance']));
    expect(s.additionalProperties).toBe(false);
    expect(validate('RunSummary', {}).length).toBeGreaterThan(0);
  });

  it("publishes each fault's crossings set aside (droppedExcursions); the demo's fault rows validate, and F1 and F2 set aside the truth's mislabelled samples", () => {
    type Node = { properties: Record<string, Node>; items: Node; description?: string };
    const faultRow = (schemas.RunSummary as unknown as Node).properties.structure.properties.faults.items;
    expect(faultRow.properties.droppedExcursions.description).toMatch(/crossings set aside/);
    const check = ajv.compile(faultRow);
    const read = (p: string) => JSON.parse(readFileSync(new URL(`../../fixtures/demo/${p}`, import.meta.url), 'utf8'));
    const samples = parseFeatureCollection('samples', read('samples.geojson')).collection as SampleCollection;
    const faults = parseFeatureCollection('faults', read('faults.geojson')).collection as FaultCollection;
    const rows = isogradLayer(samples, faults, {}).report.faults;
    for (const r of rows) expect(check(r) ? [] : check.errors, r.id).toEqual([]);
    // fixtures/truth.json dome.mislabelledSamples: the invented samples given a wrong zone on purpose; OM-GS-226 and
    // OM-GS-347 cause F1's and F2's unpaired crossings (docs/sources.md#fault-separation).
    const truth = JSON.parse(readFileSync(new URL('../../fixtures/truth.json', import.meta.url), 'utf8')) as { dome: { mislabelledSamples: string[] } };
    const setAside = (id: string) => rows.find((r) => r.id === id)!.droppedExcursions.map((e) => [e.isograd, e.sampleIds]);
    expect(setAside('F1')).toEqual([['kyanite-in', ['OM-GS-226']]]);
    expect(setAside('F2')).toEqual([['garnet-in', ['OM-GS-347']]]);
    for (const id of ['OM-GS-226', 'OM-GS-347']) expect(truth.dome.mislabelledSamples).toContain(id);
    // The contract refuses a row without the list or with a pair that names no samples.
    const { droppedExcursions, ...without } = rows[0];
    expect(check(without)).toBe(false);
    expect(check({ ...rows[0], droppedExcursions: [{ ...droppedExcursions[0], sampleIds: undefined }] })).toBe(false);
  }, 120_000);
});
