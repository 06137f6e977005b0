// npm start: build the app, then run it with the Electron binary from node_modules.
// The binary is downloaded by electron's own install step, which needs the network once. This
// script never triggers that download itself: it checks for the binary first, the way
// node_modules/electron/index.js does, and explains what to do when it is missing.
import { spawn } from 'node:child_process';
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

const binary = electronBinary();
if (binary === null) {
  console.error(
    'start: the Electron binary is not installed (Electron downloads it on first install and needs the network once: run "npx install-electron" when online); meanwhile "npm run web" runs Spanmeter in a browser.',
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
