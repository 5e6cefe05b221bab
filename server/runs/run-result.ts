/**
 * Checking a run worker's result and storing it: the one path from a RunResult (server/runs/types.ts) to the Store,
 * used by the in-process job system (server/runs/jobs.ts) and by queue workers (server/queue/worker.ts).
 */
import { gridSpecOf } from '../../shared/grid/grid.ts';
import type { Store } from '../store/types.ts';
import { LAYER_CONTENT_TYPES, LAYER_EXTS, type RunResult, type SerializedGrid } from './types.ts';

/** Layer names become file names in URLs: letters, digits, `_`, `-` and single dots. */
const LAYER_NAME = /^[A-Za-z0-9_-]+(\.[A-Za-z0-9_-]+)*$/;

/**
 * Stores a finished run's files and grids content-addressed, and its record's final fields, in one transaction
 * (the run's status is set by the caller afterwards). A malformed result (no layers, a layer name that is not a file
 * name, a grid that is not width × height Float32 with georeferencing) is refused with an Error naming the fault.
 */
export async function storeCheckedRunResult(store: Store, runId: string, result: RunResult): Promise<void> {
  const bad = (why: string) => new Error(`the run worker returned a malformed result: ${why}`);
  if (result === null || typeof result !== 'object' || !Array.isArray(result.layers)) throw bad('no layers array');
  const heat = result.grids?.heatFlow;
  checkGrid(heat, 'grids.heatFlow', bad);
  if (result.grids.heatFlowSd !== undefined) checkGrid(result.grids.heatFlowSd, 'grids.heatFlowSd', bad);
  const names = new Set<string>();
  for (const l of result.layers) {
    const name = l?.info?.name;
    if (typeof name !== 'string' || !LAYER_NAME.test(name)) throw bad(`layer name ${JSON.stringify(name)} is not a file name`);
    if (names.has(name)) throw bad(`duplicate layer ${name}`);
    names.add(name);
    for (const f of l.files ?? []) {
      if (!LAYER_EXTS.includes(f.ext) || !(f.bytes instanceof Uint8Array)) throw bad(`layer ${name}: bad file ${String(f?.ext)}`);
    }
  }
  const grids = (Object.entries(result.grids) as [string, SerializedGrid | undefined][])
    .filter((e): e is [string, SerializedGrid] => e[1] !== undefined)
    .map(([name, g]) => ({
      name,
      meta: { ...gridSpecOf(g), units: g.units },
      values: g.values,
    }));
  await store.storeRunResult(runId, {
    files: result.layers.flatMap((l) => l.files.map((f) => ({ name: l.info.name, ext: f.ext, bytes: f.bytes, contentType: LAYER_CONTENT_TYPES[f.ext] }))),
    grids,
    record: {
      layers: result.layers.map((l) => l.info),
      summary: result.summary ?? {},
      warnings: Array.isArray(result.warnings) ? result.warnings.map(String) : [],
      model: result.model ?? null,
      grids: grids.map((g) => g.name),
    },
  });
}

function checkGrid(g: SerializedGrid | undefined, label: string, bad: (why: string) => Error): void {
  if (g === undefined || g === null) throw bad(`${label} is missing`);
  if (!(Number.isInteger(g.width) && g.width > 0 && Number.isInteger(g.height) && g.height > 0)) throw bad(`${label} has no size`);
  if (!(g.values instanceof Float32Array) || g.values.length !== g.width * g.height) throw bad(`${label} values are not width × height Float32`);
  if (!(g.dx > 0 && g.dy > 0 && Number.isFinite(g.west) && Number.isFinite(g.north))) throw bad(`${label} has no georeferencing`);
  if (typeof g.crs !== 'string') throw bad(`${label} has no CRS`);
}
