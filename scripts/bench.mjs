// `npm run bench -- [args]`: bundles the development benchmark (tools/bench/main.ts) with esbuild into
// build/bench/bench.mjs and runs it. The benchmark is a development tool, not part of the shipped command line.
import { mkdirSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { build } from 'esbuild';

const ROOT = join(dirname(fileURLToPath(import.meta.url)), '..');
const OUT = join(ROOT, 'build', 'bench', 'bench.mjs');

try {
  mkdirSync(dirname(OUT), { recursive: true });
  await build({
    entryPoints: [join(ROOT, 'tools', 'bench', 'main.ts')],
    bundle: true,
    platform: 'node',
    format: 'esm',
    target: 'node20',
    outfile: OUT,
    // Bundled CommonJS dependencies may call require(); an ESM file has none, so give it one.
    banner: {
      js: "import { createRequire as __benchCreateRequire } from 'node:module'; const require = __benchCreateRequire(import.meta.url);",
    },
    logLevel: 'warning',
    absWorkingDir: ROOT,
  });
} catch (err) {
  process.stderr.write(
    `bench: could not build the benchmark: ${err instanceof Error ? err.message : String(err)}\n`,
  );
  process.exit(70);
}
// The process-level cases time the shipped command line: build its bundle too (only the build script decides
// how), and tell the benchmark where it is.
try {
  const { buildCli } = await import('./build-cli.mjs');
  process.env.SPANMETER_CLI_BUNDLE = await buildCli();
} catch (err) {
  process.stderr.write(
    `bench: could not build the command line: ${err instanceof Error ? err.message : String(err)}\n`,
  );
  process.exit(70);
}
await import(pathToFileURL(OUT).href);
