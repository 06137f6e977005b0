/**
 * The preload: runs sandboxed, with context isolation, before the page. It exposes
 * `window.spanmeter` (see `preload-api.ts`) through `contextBridge` and nothing else.
 * Bundled by scripts/build-app.mjs into one CommonJS file, build/main/preload.cjs, because a
 * sandboxed preload can `require` only `electron` and a few polyfilled modules.
 */
import { contextBridge, ipcRenderer } from 'electron';
import { API_KEY, buildSpanmeterApi } from './preload-api.ts';

contextBridge.exposeInMainWorld(
  API_KEY,
  buildSpanmeterApi((channel, ...args) => ipcRenderer.invoke(channel, ...args)),
);
