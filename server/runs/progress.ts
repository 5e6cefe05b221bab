/**
 * Progress and cancelling inside a run: stage weights turned into one monotone fraction, and the tick a run gives
 * to the engines in shared/ (called between tiles): it reports, checks the cancel signal and yields to the event
 * loop so the worker sees a cancel message.
 */
export interface Progress {
  fraction: number;
  message: string;
}

/** Stage weights → a monotone progress reporter. */
export class ProgressTracker {
  private done = 0;
  private last = 0;
  private current = 0;
  private readonly total: number;
  constructor(
    private readonly weights: Record<string, number>,
    private readonly sink?: (p: Progress) => void,
  ) {
    this.total = Object.values(weights).reduce((s, w) => s + w, 0);
  }
  /** Reports `within` ∈ [0, 1] of stage `stage`. */
  report(stage: string, within: number, message: string): void {
    const w = this.weights[stage] ?? 0;
    const f = Math.min(1, (this.done + w * Math.max(0, Math.min(1, within))) / this.total);
    this.current = w;
    if (f < this.last) return;
    this.last = f;
    this.sink?.({ fraction: f, message });
  }
  /** Closes stage `stage`. */
  finish(stage: string, message: string): void {
    this.report(stage, 1, message);
    this.done += this.weights[stage] ?? this.current;
  }
}

/** Throws the signal's reason (or an AbortError) once the run is cancelled. */
export function checkAbort(signal?: AbortSignal): void {
  if (signal?.aborted) {
    const r: unknown = signal.reason;
    throw r instanceof Error ? r : Object.assign(new Error('the run was cancelled'), { name: 'AbortError' });
  }
}

/** Lets queued messages (cancel, progress delivery) through between tiles. */
export const yieldToLoop = () => new Promise<void>((resolve) => setImmediate(resolve));

/** The tick between tiles: checks the signal, yields, then checks again (a cancel may have just arrived). */
export async function between(signal?: AbortSignal): Promise<void> {
  checkAbort(signal);
  await yieldToLoop();
  checkAbort(signal);
}
