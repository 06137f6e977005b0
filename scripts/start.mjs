// npm start: build the app, then run it with the Electron binary from node_modules.
// Electron fetches its binary on first run (node_modules/electron/index.js), which needs the network
// once. This script looks for the binary first; when it is missing it lets Electron fetch it, and when
// that fails (offline) it says what to do instead of printing a stack trace.
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { buildApp } from './build-app.mjs';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const require = createRequire(import.meta.url);

/** Path of the Electron binary, or null when it has not been downloaded. */
function electronBinary() {
  let pkgDir;
  try {
    pkgDir = path.dirname(require.resolve('electron/package.json', { paths: [root] }));
  } catch {
    return null;
  }
  const pathFile = path.join(pkgDir, 'path.txt');
  if (!existsSync(pathFile)) return null;
  const relative = readFileSync(pathFile, 'utf8').trim();
  const distDir = process.env.ELECTRON_OVERRIDE_DIST_PATH || path.join(pkgDir, 'dist');
  const binary = path.join(distDir, relative);
  if (!existsSync(binary)) return null;
  // Safe now: with the binary present, require('electron') only returns its path.
  return require('electron');
}

let binary = electronBinary();
if (binary === null) {
  console.log('start: fetching the Electron binary (first run only; this needs the network once)…');
  // Electron's own installer, with its output kept: a failed download prints a stack trace we do not show.
  let installer = null;
  try {
    installer = path.join(
      path.dirname(require.resolve('electron/package.json', { paths: [root] })),
      'install.js',
    );
  } catch {
    installer = null;
  }
  if (installer && existsSync(installer)) {
    const r = spawnSync(process.execPath, [installer], { cwd: root, encoding: 'utf8' });
    if (r.status === 0) binary = electronBinary();
    else {
      const firstLine = `${r.stderr ?? ''}`.split('\n').find((l) => /error/i.test(l));
      if (firstLine) console.error(`start: ${firstLine.trim()}`);
    }
  }
}
if (binary === null) {
  console.error(
    'start: the Electron binary could not be fetched (no network?). Run "npm start" again when online, or "npx install-electron"; meanwhile "npm run web" runs Spanmeter in a browser.',
  );
  process.exit(1);
}

try {
  await buildApp();
} catch (err) {
  console.error(`start: build failed: ${err instanceof Error ? err.message : String(err)}`);
  process.exit(1);
}

const child = spawn(binary, [root, ...process.argv.slice(2)], { stdio: 'inherit', cwd: root });
child.on('exit', (code, signal) => process.exit(code ?? (signal ? 1 : 0)));
child.on('error', (err) => {
  console.error(`start: could not run Electron: ${err.message}`);
  process.exit(1);
});
