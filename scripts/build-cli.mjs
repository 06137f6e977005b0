// Bundles the command line (cli/main.ts and everything it imports, dependencies included) into one ESM
// file for Node 20: build/cli/spanmeter.mjs. `node scripts/build-cli.mjs` builds it; scripts/run-cli.mjs
// imports buildCli() only when the bundle is out of date.
import { mkdirSync, renameSync, rmSync, utimesSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { build } from 'esbuild';

export const ROOT = join(dirname(fileURLToPath(import.meta.url)), '..');
export const BUNDLE = join(ROOT, 'build', 'cli', 'spanmeter.mjs');

// Bundled CommonJS dependencies may call require(); an ESM file has none, so give it one.
const BANNER = [
  '#!/usr/bin/env node',
  "import { createRequire as __spanmeterCreateRequire } from 'node:module';",
  'const require = __spanmeterCreateRequire(import.meta.url);',
].join('\n');

/**
 * Build the bundle. It is written to a temporary file and renamed into place, so a process reading the
 * bundle at the same moment never sees half a file. The bundle's modification time is set to the moment
 * the build started, so a source edited during the build still counts as newer next time.
 *
 * @returns The bundle's path.
 */
export async function buildCli() {
  const started = new Date();
  const result = await build({
    entryPoints: [join(ROOT, 'cli', 'main.ts')],
    bundle: true,
    platform: 'node',
    format: 'esm',
    target: 'node20',
    outfile: BUNDLE,
    write: false,
    banner: { js: BANNER },
    sourcemap: false,
    logLevel: 'warning',
    absWorkingDir: ROOT,
  });
  mkdirSync(dirname(BUNDLE), { recursive: true });
  const tmp = `${BUNDLE}.${process.pid}.tmp`;
  try {
    writeFileSync(tmp, result.outputFiles[0].contents, { mode: 0o755 });
    utimesSync(tmp, started, started);
    renameSync(tmp, BUNDLE);
  } finally {
    rmSync(tmp, { force: true });
  }
  return BUNDLE;
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  try {
    const out = await buildCli();
    console.log(`built ${out}`);
  } catch (err) {
    console.error(`build-cli: ${err instanceof Error ? err.message : String(err)}`);
    process.exitCode = 1;
  }
}
