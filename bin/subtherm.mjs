#!/usr/bin/env node
// Entry point of the `subtherm` command: registers tsx so the TypeScript sources run as they are.
import { register } from 'tsx/esm/api';

register();
const { main } = await import('../server/cli/main.ts');
process.exitCode = await main(process.argv.slice(2));
