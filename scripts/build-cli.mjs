// Builds the command line for Node 20 into build/cli/:
//   spanmeter.cjs          cli/main.ts and everything it imports, dependencies included, as one CommonJS file;
//   spanmeter.<node>.v8cache  V8's code cache for it, made by a short practice run (simulate, then analyze);
//   spanmeter.mjs          the program: a small ES module that compiles spanmeter.cjs with that cache and runs it.
// The code cache spares each start the parsing and compiling of the bundle's code (about a tenth of a second on
// a slow machine), which is most of what a short `analyze` costs besides the work itself. A cache made by
// another Node version, or with other V8 flags, is refused by V8 and the bundle is simply compiled as usual.
// `node scripts/build-cli.mjs` builds it; scripts/run-cli.mjs imports buildCli() only when the bundle is out
// of date.
import { mkdirSync, mkdtempSync, renameSync, rmSync, utimesSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import vm from 'node:vm';
import { build } from 'esbuild';

export const ROOT = join(dirname(fileURLToPath(import.meta.url)), '..');
export const BUNDLE = join(ROOT, 'build', 'cli', 'spanmeter.mjs');
const CODE = join(ROOT, 'build', 'cli', 'spanmeter.cjs');
/** The code cache's file name carries the Node version that made it (V8 refuses any other's). */
export const CACHE = join(ROOT, 'build', 'cli', `spanmeter.${process.version}.v8cache`);

// The program. It reads the cache for the Node version running it, if there is one.
const LAUNCHER = `#!/usr/bin/env node
// Made by scripts/build-cli.mjs: runs spanmeter.cjs, compiled with V8's code cache when one fits.
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import vm from 'node:vm';

const here = dirname(fileURLToPath(import.meta.url));
const file = join(here, 'spanmeter.cjs');
let cachedData;
try {
  cachedData = readFileSync(join(here, \`spanmeter.\${process.version}.v8cache\`));
} catch {
  cachedData = undefined;
}
// The same wrapper as the build's, so the cache matches the source it was made from.
const source = '(function (exports, require, module, __filename, __dirname) {' + readFileSync(file, 'utf8') + '\\n})';
const script = new vm.Script(source, { filename: file, cachedData });
if (process.env.SPANMETER_DEBUG === '1' && cachedData !== undefined && script.cachedDataRejected) {
  process.stderr.write('spanmeter: the code cache does not fit this Node; compiling as usual\\n');
}
const mod = { exports: {} };
script.runInThisContext().call(mod.exports, mod.exports, createRequire(file), mod, file, here);

/** The command line's run(argv), as exported by cli/main.ts. */
export const run = mod.exports.run;

if (process.argv[1] !== undefined && import.meta.url === pathToFileURL(process.argv[1]).href) {
  process.exitCode = await run(process.argv.slice(2));
}
`;

/**
 * An esbuild plugin that gives zod only its English messages. zod's namespace object re-exports every one of its
 * translations (`z.locales`), so the bundle would carry all of them (about 400 kB of the 1.35 MB, read and
 * deserialised at every start); the command line never switches zod's language, and English is the one zod
 * configures itself with. When zod moves its files, the filter no longer matches and the bundle simply carries
 * them all again.
 */
const zodEnglishOnly = {
  name: 'zod-english-only',
  setup(b) {
    b.onResolve({ filter: /^\.\.\/locales\/index\.js$/ }, (args) =>
      /[\\/]node_modules[\\/]zod[\\/]/.test(args.importer)
        ? { path: join(dirname(args.importer), '..', 'locales', 'en.js'), namespace: 'zod-english-only' }
        : undefined,
    );
    b.onLoad({ filter: /.*/, namespace: 'zod-english-only' }, (args) => ({
      contents: `export { default as en } from ${JSON.stringify(args.path)};`,
      loader: 'js',
      resolveDir: dirname(args.path),
    }));
  },
};

/** CommonJS's function wrapper around the bundle; the program (LAUNCHER) builds the very same string. */
function wrap(code) {
  return '(function (exports, require, module, __filename, __dirname) {' + code + '\n})';
}

/** Writes `bytes` to `path` through a temporary file renamed into place, with modification time `when`. */
function writeAtomic(path, bytes, when, mode = 0o644) {
  const tmp = `${path}.${process.pid}.tmp`;
  try {
    writeFileSync(tmp, bytes, { mode });
    utimesSync(tmp, when, when);
    renameSync(tmp, path);
  } finally {
    rmSync(tmp, { force: true });
  }
}

/**
 * Compiles the bundle as the program will, runs `simulate` and `analyze --json` on a short recording in a
 * temporary folder (their output discarded), and returns V8's code cache of everything that ran.
 */
async function practiceRun(code) {
  const script = new vm.Script(wrap(code), { filename: CODE });
  const mod = { exports: {} };
  script.runInThisContext().call(mod.exports, mod.exports, createRequire(CODE), mod, CODE, dirname(CODE));
  const dir = mkdtempSync(join(tmpdir(), 'spanmeter-cli-cache-'));
  // The commands write to the process's own streams: keep what they print out of the build's output.
  const writes = [process.stdout.write, process.stderr.write];
  let printed = '';
  const keep = (chunk) => {
    printed += String(chunk);
    return true;
  };
  process.stdout.write = keep;
  process.stderr.write = keep;
  try {
    const wav = join(dir, 'practice.wav');
    const run = mod.exports.run;
    const a = await run(['simulate', '--out', wav, '--plan', '0-2', '--hold', '1', '--channels', '2']);
    const b = await run(['analyze', wav, '--points', '0-2', '--json']);
    if (a !== 0 || b !== 0) {
      throw new Error(
        `the practice run failed (simulate exit ${a}, analyze exit ${b}): ${printed.slice(-500)}`,
      );
    }
  } finally {
    [process.stdout.write, process.stderr.write] = writes;
    rmSync(dir, { recursive: true, force: true });
  }
  return script.createCachedData();
}

/**
 * Build the bundle, its code cache and the program. Each is written to a temporary file and renamed into place,
 * so a process reading them at the same moment never sees half a file. Their modification times are set to the
 * moment the build started, so a source edited during the build still counts as newer next time.
 *
 * @returns The program's path.
 */
export async function buildCli() {
  const started = new Date();
  const result = await build({
    entryPoints: [join(ROOT, 'cli', 'main.ts')],
    bundle: true,
    platform: 'node',
    format: 'cjs',
    target: 'node20',
    outfile: CODE,
    write: false,
    // cli/main.ts runs itself when it is the program; in this bundle the launcher does that instead.
    define: { 'import.meta.url': 'undefined' },
    sourcemap: false,
    logLevel: 'warning',
    absWorkingDir: ROOT,
    plugins: [zodEnglishOnly],
  });
  mkdirSync(dirname(BUNDLE), { recursive: true });
  const code = result.outputFiles[0].text;
  writeAtomic(CODE, code, started);
  // The cache only saves time: without it (the practice run failed) the program compiles the bundle as usual.
  rmSync(CACHE, { force: true });
  try {
    writeAtomic(CACHE, await practiceRun(code), started);
  } catch (err) {
    process.stderr.write(
      `build-cli: no code cache, the command line will start a little slower (${err instanceof Error ? err.message : String(err)})\n`,
    );
  }
  writeAtomic(BUNDLE, LAUNCHER, started, 0o755);
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
