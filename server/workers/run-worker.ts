/**
 * Worker side of an analysis run: a thin wrapper over runPipeline (server/runs/pipeline.ts). Progress goes out on
 * `port` as `{ type: 'progress', fraction, message }`; a `{ type: 'cancel' }` message on the same port stops the
 * run between tiles (the result is then an AbortError).
 */
import type { MessagePort } from 'node:worker_threads';
import type { RunRequest } from '../../shared/schema/run.ts';
import { runPipeline, type RunResult, type StoredDataset } from '../runs/pipeline.ts';
import { isogradStage } from '../runs/isograd-stage.ts';
import { cancelSignal } from '../runs/types.ts';
import { applyWorkerNiceness } from './priority.ts';

// Runs are the longest work: their threads yield to requests and short tasks (server/workers/priority.ts).
applyWorkerNiceness();

export type { RunResult } from '../runs/pipeline.ts';

export default async function runWorker({
  request,
  datasets,
  port,
}: {
  request: RunRequest;
  datasets: Record<string, StoredDataset>;
  port: MessagePort;
}): Promise<RunResult> {
  const cancel = cancelSignal(port);
  try {
    return await runPipeline(request, datasets, {
      signal: cancel.signal,
      extraLayers: [isogradStage],
      progress: (p) => port.postMessage({ type: 'progress', fraction: p.fraction, message: p.message }),
    });
  } finally {
    cancel.dispose();
  }
}
