#!/usr/bin/env node
// Entry point of the `subtherm` command. It runs the compiled command line in dist/cli/ (bin/build-cli.mjs), building
// it first when a source under server/ or shared/ is newer than the build; without esbuild, or with
// SUBTHERM_FROM_SOURCE=1, it registers tsx and runs the TypeScript sources as they are.
// A closed pipe (e.g. `subtherm geotherm ... | head`) ends the output quietly.
process.stdout.on('error', (e) => {
  if (e.code === 'EPIPE') process.exit(0);
  throw e;
});

async function compiled() {
  if (process.env.SUBTHERM_FROM_SOURCE === '1') return null;
  const { CLI_ENTRY, buildCli, cliBuildIsFresh } = await import('./build-cli.mjs');
  if (!cliBuildIsFresh()) {
    try {
      await buildCli({ quiet: true });
    } catch {
      return null; // no esbuild (or a build error the type check will name): run the sources
    }
  }
  const { pathToFileURL } = await import('node:url');
  return (await import(pathToFileURL(CLI_ENTRY).href)).main;
}

async function fromSource() {
  const { register } = await import('tsx/esm/api');
  register();
  return (await import('../server/cli/main.ts')).main;
}

const main = (await compiled()) ?? (await fromSource());
process.exitCode = await main(process.argv.slice(2));
