/**
 * Node options of every worker thread the server starts (run, compute, interpolation and queue workers): the
 * TypeScript loader, registered in the worker itself (server/workers/tsx-register.mjs says why `--import tsx` does
 * not do it on Node 20).
 */
export const WORKER_EXEC_ARGV: string[] = ['--import', new URL('./tsx-register.mjs', import.meta.url).href];
