// Registers tsx's TypeScript loader in the thread that imports it: every worker thread is started with
// `--import <this file>` (WORKER_EXEC_ARGV in server/workers/exec-argv.ts) so that it can run the TypeScript sources.
// `--import tsx` is not enough: on Node 20, tsx registers its loader from --import on the main thread only (loader
// hooks registered in a worker before Node 22 are its own, and tsx leaves workers alone there), so a worker started
// that way cannot load a .ts file.
import { register } from 'tsx/esm/api';

register();
