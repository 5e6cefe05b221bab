/**
 * GET /api/health: version, store, runs and compute tasks in flight, and the request thread's event-loop delay
 * (Node's delay histogram, 10 ms resolution) over the current window, with the previous full minute beside it.
 */
import type { Hono } from 'hono';
import { monitorEventLoopDelay } from 'node:perf_hooks';
import { VERSION } from '../../shared/version.ts';
import type { AppContext } from './context.ts';
import { queueHealth } from '../queue/select.ts';

/** Delay percentiles of the request thread's event loop, ms. */
export interface LoopDelay {
  p50: number;
  p99: number;
  max: number;
}

/** Registers the route; the returned function stops the event-loop monitor. */
export function healthRoutes(app: Hono, ctx: AppContext): () => void {
  const loopDelay = monitorEventLoopDelay({ resolution: 10 });
  loopDelay.enable();
  const ms = (ns: number) => Math.round((ns / 1e6) * 100) / 100;
  let windowStart = Date.now();
  let lastWindow: LoopDelay | null = null;
  const timer = setInterval(() => {
    lastWindow = { p50: ms(loopDelay.percentile(50)), p99: ms(loopDelay.percentile(99)), max: ms(loopDelay.max) };
    loopDelay.reset();
    windowStart = Date.now();
  }, 60_000);
  timer.unref();

  app.get('/api/health', (c) => {
    const current: LoopDelay = { p50: ms(loopDelay.percentile(50)), p99: ms(loopDelay.percentile(99)), max: ms(loopDelay.max) };
    const { compute } = ctx;
    return c.json({
      ok: true,
      version: VERSION,
      store: ctx.store.kind,
      // Runs execute in this server's worker threads, or on the shared Redis queue's workers.
      ...queueHealth(ctx.jobs, ctx.limits.runConcurrency),
      eventLoopDelayMs: { ...current, windowStartedAt: new Date(windowStart).toISOString(), previousMinute: lastWindow },
      runs: ctx.jobs.counts(),
      computeTasks: {
        short: compute.short.load(),
        long: compute.long.load(),
        heatInPlace: ctx.heatJobs.inFlight(),
        layers: compute.layers.load(),
        data: compute.data.load(),
      },
    });
  });
  return () => {
    clearInterval(timer);
    loopDelay.disable();
  };
}
