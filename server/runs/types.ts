/**
 * The contract between the job system and the run worker (server/workers/run-worker.ts): what a task carries in,
 * what the worker posts while it works, and what it returns.
 */
import type { MessagePort } from 'node:worker_threads';
import type { Grid } from '../../shared/grid/grid.ts';
import type { RunLayerInfo, RunRequest, RunSummary } from '../../shared/schema/run.ts';

export type LayerExt = 'tif' | 'png' | 'geojson' | 'csv';
export const LAYER_EXTS: readonly LayerExt[] = ['tif', 'png', 'geojson', 'csv'];

export const LAYER_CONTENT_TYPES: Record<LayerExt, string> = {
  tif: 'image/tiff',
  png: 'image/png',
  geojson: 'application/geo+json',
  csv: 'text/csv; charset=utf-8',
};

/** A grid as it crosses the thread boundary: the project's Grid with Float32 values (structured-cloneable). */
export type SerializedGrid = Grid<Float32Array>;

export interface RunFile {
  ext: LayerExt;
  bytes: Uint8Array;
}

export interface RunLayer {
  info: RunLayerInfo;
  files: RunFile[];
}

/** What a run returns: its layers with their files, the summary (the run contract), its grids and warnings. */
export interface RunResult {
  layers: RunLayer[];
  summary: RunSummary;
  grids: { heatFlow: SerializedGrid; heatFlowSd?: SerializedGrid };
  /** The validated thermal model JSON (top-level descriptive members set aside). */
  model: unknown;
  warnings: string[];
}

/** A data set as a run reads it: its kind and its text. */
export interface StoredDataset {
  kind: string;
  body: string;
}

export interface RunTask {
  request: RunRequest;
  /** The data sets the request names, by id. */
  datasets: Record<string, StoredDataset>;
  /** The worker posts `{ type: 'progress', fraction, message }` on it; the job system posts `{ type: 'cancel' }`. */
  port: MessagePort;
}

/** What the job system posts on a task's port to stop the run between tiles (then it also ends the thread). */
export const CANCEL_MESSAGE = { type: 'cancel' } as const;

/**
 * The worker side of cancelling: an AbortSignal that fires when `{ type: 'cancel' }` arrives on the task's port.
 * `dispose` stops listening. The one cancel path of the real run worker and of any stand-in for it.
 */
export function cancelSignal(port: MessagePort): { signal: AbortSignal; dispose: () => void } {
  const controller = new AbortController();
  const onMessage = (m: unknown) => {
    if (m !== null && typeof m === 'object' && (m as { type?: unknown }).type === CANCEL_MESSAGE.type) controller.abort();
  };
  port.on('message', onMessage);
  return { signal: controller.signal, dispose: () => port.off('message', onMessage) };
}

export interface RunProgressMessage {
  type: 'progress';
  fraction: number;
  message: string;
}
