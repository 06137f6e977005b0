// `node scripts/run-cli.mjs <command> [args]`: runs the bundled command line, rebuilding the bundle first
// only when a file under dsp/ or cli/, package-lock.json or the build script is newer than it, or when it has no
// code cache for the Node running it. The check is a cheap scan of modification times; esbuild is loaded only
// when a rebuild is needed.
import { readdirSync, statSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const ROOT = join(dirname(fileURLToPath(import.meta.url)), '..');
const BUNDLE = join(ROOT, 'build', 'cli', 'spanmeter.mjs');
const SOURCE_DIRS = ['dsp', 'cli', 'main'];
const SOURCE_FILES = ['package-lock.json', 'scripts/build-cli.mjs'];

function mtimeMs(path) {
  try {
    return statSync(path).mtimeMs;
  } catch {
    return -Infinity;
  }
}

/** True when some source is newer than `since` (ms since the epoch). */
function newerThan(dir, since) {
  let entries;
  try {
    entries = readdirSync(dir, { withFileTypes: true });
  } catch {
    return false;
  }
  for (const e of entries) {
    const p = join(dir, e.name);
    if (e.isDirectory()) {
      if (newerThan(p, since)) return true;
    } else if (mtimeMs(p) > since) {
      return true;
    }
  }
  return false;
}

function isStale() {
  const built = mtimeMs(BUNDLE);
  if (built === -Infinity) return true;
  // The code cache is made for one Node version (scripts/build-cli.mjs): another Node gets its own.
  if (mtimeMs(join(ROOT, 'build', 'cli', `spanmeter.${process.version}.v8cache`)) === -Infinity) return true;
  return (
    SOURCE_FILES.some((f) => mtimeMs(join(ROOT, f)) > built) ||
    SOURCE_DIRS.some((d) => newerThan(join(ROOT, d), built))
  );
}

if (isStale()) {
  try {
    const { buildCli } = await import('./build-cli.mjs');
    await buildCli();
  } catch (err) {
    process.stderr.write(
      `spanmeter: could not build the command line: ${err instanceof Error ? err.message : String(err)}\n`,
    );
    process.exit(70);
  }
}

const { run } = await import(pathToFileURL(BUNDLE).href);
process.exitCode = await run(process.argv.slice(2));
