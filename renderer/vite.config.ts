/**
 * Vite configuration of the renderer. `scripts/build-app.mjs` and `scripts/web.mjs` call `vite build` with
 * `root: renderer/` and `outDir: build/renderer`; Vite finds this file in that root.
 *
 * The page runs under a strict Content-Security-Policy (main/security.ts: `script-src 'self'`,
 * `worker-src 'self'`, no inline code, no blob: or data: scripts), so the build must emit every script,
 * the worker and the AudioWorklet module as files of their own: nothing is inlined.
 */
import { createRequire } from 'node:module';
import { defineConfig } from 'vite';
import react from '@vitejs/plugin-react';

const require = createRequire(import.meta.url);

export default defineConfig({
  plugins: [react()],
  base: './',
  resolve: {
    alias: {
      // dsp/io/wav.ts imports wavefile's default export, which its CommonJS build (what Node loads) has and
      // its ES module entry does not: bundle the CommonJS build, as Node runs it.
      wavefile: require.resolve('wavefile'),
    },
  },
  build: {
    // No asset, worker or worklet may become a data: or blob: URL (CSP).
    assetsInlineLimit: 0,
    target: 'chrome130',
    sourcemap: true,
    modulePreload: { polyfill: false },
    chunkSizeWarningLimit: 2000,
  },
  worker: { format: 'es' },
});
