// Each verb registers itself here, one line a verb, loaded lazily (keep one line per verb; add yours below).
import { registerVerb } from './main.ts';

registerVerb('serve', 'start the web map and API server', async () => (await import('./serve.ts')).serve);
