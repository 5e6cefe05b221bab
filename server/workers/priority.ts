/**
 * Scheduling priority of a worker thread. On Linux the nice value belongs to each thread (setpriority(2) with
 * pid 0 acts on the calling thread under NPTL), so a pool of long computations started with `workerData.niceness`
 * yields the cores to the request thread and to short tasks whenever they want them, and still uses idle time.
 * Elsewhere the call may act on the whole process or be refused; then the thread keeps its priority.
 */
import { getPriority, setPriority } from 'node:os';
import { isMainThread, workerData } from 'node:worker_threads';

/**
 * Lowers this worker thread's priority by `workerData.niceness` (1–19, higher is kinder to others) below the
 * priority it started with (the process's: a server started under `nice -n 10` keeps its long work 10 below its
 * requests, capped at 19); returns the nice value set.
 */
export function applyWorkerNiceness(): number | null {
  if (isMainThread || process.platform !== 'linux') return null;
  const n = (workerData as { niceness?: unknown } | null)?.niceness;
  if (typeof n !== 'number' || !Number.isInteger(n) || n <= 0 || n > 19) return null;
  try {
    const target = Math.min(19, getPriority() + n);
    setPriority(target);
    return target;
  } catch {
    return null;
  }
}
