/**
 * The contract between the job system and the run worker (server/workers/run-worker.ts): what a task carries in,
 * what the worker posts while it works, and what it returns.
 */
import type { MessagePort } from 'node:worker_threads';
import type { RunRequest } from '../../shared/schema/run.ts';

export type LayerExt = 'tif' | 'png' | 'geojson' | 'csv';
export const LAYER_EXTS: readonly LayerExt[] = ['tif', 'png', 'geojson', 'csv'];

export const LAYER_CONTENT_TYPES: Record<LayerExt, string> = {
  tif: 'image/tiff',
  png: 'image/png',
  geojson: 'application/geo+json',
  csv: 'text/csv; charset=utf-8',
};

// The worker's result and its grids are defined once, by the pipeline.
export type { RunResult, SerializedGrid } from './pipeline.ts';

export interface RunTask {
  request: RunRequest;
  /** The data sets the request names, by id. */
  datasets: Record<string, { kind: string; body: string }>;
  /** Posts `{ type: 'progress', fraction, message }`. */
  port: MessagePort;
  /** Int32Array over this buffer: element 0 becomes 1 when the run is cancelled (checked between tiles). */
  cancelFlag: SharedArrayBuffer;
}

export interface RunProgressMessage {
  type: 'progress';
  fraction: number;
  message: string;
}

