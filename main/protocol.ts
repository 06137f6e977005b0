/**
 * Serving the built renderer from the `app://spanmeter/` scheme: a pure path resolver that
 * cannot leave the folder, a MIME table, and the request handler given to `protocol.handle`.
 *
 * Electron security checklist item 18 (https://www.electronjs.org/docs/latest/tutorial/security):
 * prefer a custom protocol over `file://`, so the page can only reach the files of this folder.
 * The handler uses only the Fetch API's `Request`/`Response`, so it runs in plain Node for tests.
 */
import type { CustomScheme } from 'electron';
import { readFile as fsReadFile } from 'node:fs/promises';
import path from 'node:path';
import { APP_HOST, APP_SCHEME, CONTENT_SECURITY_POLICY } from './security.ts';

/**
 * How the app scheme is registered (`protocol.registerSchemesAsPrivileged`, before `ready`):
 * - `standard`: URLs have a host and relative URLs resolve, so `app://spanmeter` is a real origin;
 * - `secure`: a secure context, which `getUserMedia` and `AudioWorklet` require;
 * - `supportFetchAPI`: `fetch()` and `audioWorklet.addModule()` can load from it;
 * - `corsEnabled`: module scripts and module workers (fetched in CORS mode) load; no
 *   Access-Control-Allow-Origin header is ever sent, so other origins still cannot read it;
 * - `codeCache`: V8 caches compiled scripts between runs.
 * `bypassCSP` stays false: the Content-Security-Policy applies (checklist item 7).
 */
export const APP_SCHEME_PRIVILEGES: CustomScheme = {
  scheme: APP_SCHEME,
  privileges: {
    standard: true,
    secure: true,
    supportFetchAPI: true,
    corsEnabled: true,
    codeCache: true,
    bypassCSP: false,
    allowServiceWorkers: false,
    stream: false,
  },
};

/** Where a URL path leads: a file inside the root, or why it was refused. */
export type ResolveResult = { kind: 'ok'; filePath: string } | { kind: 'rejected'; reason: string };

/**
 * Maps a URL path onto a file inside `root`, refusing anything that could land outside it.
 *
 * Refused: malformed percent-encoding; `..` segments, also when encoded (`%2e%2e`, `..%2f`);
 * backslashes (a separator on Windows); NUL; a leading `//` (UNC or protocol-relative); drive
 * letters and any `:` (Windows drives and NTFS alternate data streams). Empty and `.` segments are
 * dropped; the empty path is `index.html`. A final check confirms the resolved path is inside root.
 *
 * @param root - absolute path of the folder served; throws RangeError when relative.
 * @param urlPath - the URL's pathname, still percent-encoded, e.g. `/assets/index-1a2b.js`.
 * @example resolveInside('/app/renderer', '/assets/a.js') // → { kind: 'ok', filePath: '/app/renderer/assets/a.js' }
 * @example resolveInside('/app/renderer', '/%2e%2e/secret').kind // → 'rejected'
 */
export function resolveInside(root: string, urlPath: string): ResolveResult {
  if (typeof root !== 'string' || !path.isAbsolute(root)) {
    throw new RangeError(`resolveInside: root must be an absolute path, got ${JSON.stringify(root)}`);
  }
  if (typeof urlPath !== 'string') return { kind: 'rejected', reason: 'the path is not a string' };
  let decoded: string;
  try {
    decoded = decodeURIComponent(urlPath);
  } catch {
    return { kind: 'rejected', reason: 'the path has malformed percent-encoding' };
  }
  if (decoded.includes('\0')) return { kind: 'rejected', reason: 'the path contains a NUL character' };
  if (decoded.includes('\\')) return { kind: 'rejected', reason: 'the path contains a backslash' };
  if (decoded.startsWith('//')) return { kind: 'rejected', reason: 'the path starts with "//"' };
  const segments = decoded.split('/').filter((s) => s !== '' && s !== '.');
  if (segments.includes('..')) return { kind: 'rejected', reason: 'the path contains ".." (path traversal)' };
  if (segments.some((s) => s.includes(':'))) {
    return { kind: 'rejected', reason: 'the path contains ":" (drive letter or stream name)' };
  }
  const relative = segments.length === 0 ? 'index.html' : segments.join('/');
  if (path.isAbsolute(relative)) return { kind: 'rejected', reason: 'the path is absolute' };
  const rootResolved = path.resolve(root);
  const filePath = path.resolve(rootResolved, relative);
  const back = path.relative(rootResolved, filePath);
  if (back === '' || back.startsWith('..') || path.isAbsolute(back)) {
    return { kind: 'rejected', reason: 'the path leads outside the served folder' };
  }
  return { kind: 'ok', filePath };
}

/**
 * Media types by file extension, for what a Vite build emits.
 * Sources: IANA Media Types registry; RFC 9239 (text/javascript for JavaScript, including
 * modules); RFC 8081 (font/woff2, font/woff, font/ttf); WebAssembly JS API spec (application/wasm).
 */
export const MIME_TYPES: Readonly<Record<string, string>> = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.mjs': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.json': 'application/json',
  '.map': 'application/json',
  '.txt': 'text/plain; charset=utf-8',
  '.svg': 'image/svg+xml',
  '.png': 'image/png',
  '.jpg': 'image/jpeg',
  '.jpeg': 'image/jpeg',
  '.gif': 'image/gif',
  '.webp': 'image/webp',
  '.ico': 'image/vnd.microsoft.icon',
  '.woff': 'font/woff',
  '.woff2': 'font/woff2',
  '.ttf': 'font/ttf',
  '.wasm': 'application/wasm',
  '.wav': 'audio/wav',
};

/**
 * The Content-Type for a file, by extension (case-insensitive); `application/octet-stream` when
 * unknown, which with `nosniff` a browser will neither run nor render.
 *
 * @example mimeTypeFor('/x/assets/index.js') // → 'text/javascript; charset=utf-8'
 */
export function mimeTypeFor(filePath: string): string {
  return MIME_TYPES[path.extname(filePath).toLowerCase()] ?? 'application/octet-stream';
}

/** Headers sent with every response of the app protocol, errors included. */
export function securityHeaders(): Record<string, string> {
  return {
    'Content-Security-Policy': CONTENT_SECURITY_POLICY,
    'X-Content-Type-Options': 'nosniff',
    'Cross-Origin-Opener-Policy': 'same-origin',
    'Cache-Control': 'no-cache',
  };
}

export interface AppProtocolOptions {
  /** Absolute path of the built renderer folder (`build/renderer`). */
  root: string;
  /** Reads a file (default: `fs.promises.readFile`). Tests may pass a fake. */
  readFile?: (filePath: string) => Promise<Uint8Array>;
}

function plain(status: number, text: string): Response {
  return new Response(text, {
    status,
    headers: { ...securityHeaders(), 'Content-Type': 'text/plain; charset=utf-8' },
  });
}

/**
 * The handler for `protocol.handle('app', …)`: serves files of `root` for `app://spanmeter/…`,
 * GET and HEAD only, with the CSP header and the right Content-Type on every response.
 * 400 for another scheme or host, 403 for a refused path, 404 for a missing file, 405 for other
 * methods, 500 for other read errors.
 *
 * @example protocol.handle('app', createAppProtocolHandler({ root: '/opt/Spanmeter/build/renderer' }))
 */
export function createAppProtocolHandler(
  options: AppProtocolOptions,
): (request: Request) => Promise<Response> {
  const readFile = options.readFile ?? ((p: string) => fsReadFile(p));
  if (!path.isAbsolute(options.root)) {
    throw new RangeError(
      `createAppProtocolHandler: root must be an absolute path, got ${JSON.stringify(options.root)}`,
    );
  }
  return async (request) => {
    let url: URL;
    try {
      url = new URL(request.url);
    } catch {
      return plain(400, 'Bad request URL');
    }
    if (url.protocol !== `${APP_SCHEME}:` || url.host !== APP_HOST) return plain(400, 'Unknown host');
    if (request.method !== 'GET' && request.method !== 'HEAD') return plain(405, 'Method not allowed');
    const resolved = resolveInside(options.root, url.pathname);
    if (resolved.kind === 'rejected') return plain(403, `Refused: ${resolved.reason}`);
    let body: Uint8Array;
    try {
      body = await readFile(resolved.filePath);
    } catch (err) {
      const code = (err as { code?: string }).code;
      if (code === 'ENOENT' || code === 'EISDIR' || code === 'ENOTDIR') return plain(404, 'Not found');
      return plain(500, 'Could not read the file');
    }
    const headers = { ...securityHeaders(), 'Content-Type': mimeTypeFor(resolved.filePath) };
    return new Response(request.method === 'HEAD' ? null : (body as Uint8Array<ArrayBuffer>), {
      status: 200,
      headers,
    });
  };
}
