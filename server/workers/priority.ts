/**
 * Scheduling priority of a worker thread. On Linux the nice value belongs to each thread (setpriority(2) with
 * pid 0 acts on the calling thread under NPTL), so a pool of long computations started with `workerData.niceness`
 * yields the cores to the request thread and to short tasks whenever they want them, and still uses idle time.
 * Elsewhere the call may act on the whole process or be refused; then the thread keeps its priority.
 */
import { setPriority } from 'node:os';
import { isMainThread, workerData } from 'node:worker_threads';

/** Applies `workerData.niceness` (0–19, higher is kinder to others) to this worker thread; returns what was set. */
export function applyWorkerNiceness(): number | null {
  if (isMainThread || process.platform !== 'linux') return null;
  const n = (workerData as { niceness?: unknown } | null)?.niceness;
  if (typeof n !== 'number' || !Number.isInteger(n) || n <= 0 || n > 19) return null;
  try {
    setPriority(n);
    return n;
  } catch {
    return null;
  }
}
