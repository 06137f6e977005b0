// Builds the desktop app into build/:
//   build/main/main.cjs     the main process (esbuild, CommonJS, electron external)
//   build/main/preload.cjs  the preload, one self-contained CommonJS file, as sandboxed preloads require
//   build/renderer/         the renderer (vite build), skipped while renderer/index.html does not exist
// Usage: node scripts/build-app.mjs [--skip-renderer]
import { build } from 'esbuild';
import { existsSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');

/** Modules a sandboxed preload may require (Electron docs, "Process Sandboxing": electron, events, timers, url). */
const SANDBOX_PRELOAD_MODULES = new Set(['electron', 'events', 'timers', 'url']);

/** esbuild options shared by main and preload. */
function common(entry, outfile, target) {
  return {
    absWorkingDir: root,
    entryPoints: [entry],
    outfile,
    bundle: true,
    platform: 'node',
    format: 'cjs',
    target,
    external: ['electron'],
    sourcemap: 'linked',
    legalComments: 'none',
    logLevel: 'warning',
    metafile: true,
  };
}

/** Fails when the preload bundle would `require` anything a sandboxed preload cannot. */
function checkPreloadImports(metafile) {
  const bad = [];
  for (const output of Object.values(metafile.outputs)) {
    for (const imp of output.imports ?? []) {
      if (imp.external && !SANDBOX_PRELOAD_MODULES.has(imp.path)) bad.push(imp.path);
    }
  }
  if (bad.length > 0) {
    throw new Error(
      `preload bundle requires ${bad.join(', ')}; a sandboxed preload may only require electron, events, timers, url`,
    );
  }
}

export async function buildMain() {
  // Electron 45's Node is 22.x.
  await build(common('main/main.ts', 'build/main/main.cjs', 'node22'));
}

export async function buildPreload() {
  // The preload runs in the renderer's Chromium.
  const result = await build(common('main/preload.ts', 'build/main/preload.cjs', 'chrome130'));
  checkPreloadImports(result.metafile);
}

export async function buildRenderer() {
  if (!existsSync(path.join(root, 'renderer', 'index.html'))) {
    console.log('build-app: renderer/index.html does not exist yet; skipping the renderer build.');
    return false;
  }
  const { build: viteBuild } = await import('vite');
  // Vite takes production or development from NODE_ENV when it is set, and a test runner sets it to
  // 'test' for everything it starts (the browser tests' web server included): without this the renderer
  // was built with React's development runtime, several times slower, and not what ships.
  const nodeEnv = process.env.NODE_ENV;
  process.env.NODE_ENV = 'production';
  try {
    await viteBuild({
      root: path.join(root, 'renderer'),
      mode: 'production',
      // Relative asset URLs work both under app://spanmeter/ and from a plain folder.
      base: './',
      logLevel: 'warn',
      build: { outDir: path.join(root, 'build', 'renderer'), emptyOutDir: true },
    });
  } finally {
    if (nodeEnv === undefined) delete process.env.NODE_ENV;
    else process.env.NODE_ENV = nodeEnv;
  }
  return true;
}

export async function buildApp({ renderer = true } = {}) {
  await buildMain();
  await buildPreload();
  console.log('build-app: wrote build/main/main.cjs and build/main/preload.cjs');
  if (renderer && (await buildRenderer())) console.log('build-app: wrote build/renderer/');
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) {
  buildApp({ renderer: !process.argv.includes('--skip-renderer') }).catch((err) => {
    console.error(`build-app: ${err instanceof Error ? err.message : String(err)}`);
    process.exit(1);
  });
}
