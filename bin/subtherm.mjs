#!/usr/bin/env node
// Entry point of the `subtherm` command: registers tsx so the TypeScript sources run as they are.
import { register } from 'tsx/esm/api';

register();
// A closed pipe (e.g. `subtherm geotherm ... | head`) ends the output quietly.
process.stdout.on('error', (e) => {
  if (e.code === 'EPIPE') process.exit(0);
  throw e;
});
const { main } = await import('../server/cli/main.ts');
process.exitCode = await main(process.argv.slice(2));
