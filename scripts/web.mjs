// npm run web: Spanmeter in a plain browser. Builds the renderer into build/renderer when it is missing
// or older than its sources, then serves it from 127.0.0.1 with a tiny static server that sends the same
// Content-Security-Policy as the desktop app (read from main/security.ts, so the two cannot drift).
// It answers only requests addressed to 127.0.0.1 or localhost on its own port (a page on another name
// that resolves to 127.0.0.1, DNS rebinding, gets 403), sends Permissions-Policy and
// Cross-Origin-Resource-Policy, and answers 500 to a request that fails instead of exiting.
//   PORT=NNNN npm run web      serve at http://127.0.0.1:NNNN/ (default 5178; 0 picks a free port)
//   node scripts/web.mjs --no-build   serve what is there
import { createServer } from 'node:http';
import { setTimeout } from 'node:timers';
import { readdirSync, readFileSync, statSync, existsSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { build } from 'esbuild';
import { buildRenderer } from './build-app.mjs';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const outDir = path.join(root, 'build', 'renderer');
const DEFAULT_PORT = 5178;

/** Newest modification time under a folder, ms (0 when it does not exist). */
function newestMtime(dir) {
  if (!existsSync(dir)) return 0;
  let newest = 0;
  for (const entry of readdirSync(dir, { withFileTypes: true })) {
    const p = path.join(dir, entry.name);
    if (entry.isDirectory()) newest = Math.max(newest, newestMtime(p));
    else newest = Math.max(newest, statSync(p).mtimeMs);
  }
  return newest;
}

/** True when build/renderer is missing or older than anything it is built from. */
function isStale() {
  const index = path.join(outDir, 'index.html');
  if (!existsSync(index)) return true;
  const built = statSync(index).mtimeMs;
  const sources = Math.max(
    newestMtime(path.join(root, 'renderer')),
    newestMtime(path.join(root, 'dsp')),
    newestMtime(path.join(root, 'main')),
  );
  return sources > built;
}

/** The CSP string exported by main/security.ts (its electron imports are types only). */
async function loadCsp() {
  const result = await build({
    absWorkingDir: root,
    entryPoints: ['main/security.ts'],
    bundle: true,
    write: false,
    format: 'esm',
    platform: 'node',
    external: ['electron'],
    logLevel: 'silent',
  });
  const code = result.outputFiles[0].text;
  const mod = await import(`data:text/javascript;base64,${Buffer.from(code).toString('base64')}`);
  return mod.CONTENT_SECURITY_POLICY;
}

const MIME = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.mjs': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.map': 'application/json; charset=utf-8',
  '.json': 'application/json; charset=utf-8',
  '.svg': 'image/svg+xml',
  '.png': 'image/png',
  '.ico': 'image/x-icon',
  '.woff2': 'font/woff2',
  '.txt': 'text/plain; charset=utf-8',
};

/** The file a request path maps to inside build/renderer, or null for anything outside it. */
export function resolveRequestPath(urlPath) {
  let decoded;
  try {
    decoded = decodeURIComponent(urlPath.split('?')[0].split('#')[0]);
  } catch {
    return null;
  }
  if (decoded.includes('\0')) return null;
  const rel = decoded === '/' || decoded === '' ? 'index.html' : decoded.replace(/^\/+/, '');
  const full = path.resolve(outDir, rel);
  if (full !== outDir && !full.startsWith(outDir + path.sep)) return null;
  return full;
}

/**
 * True when a request's Host header names this server: 127.0.0.1 or localhost (any letter case) on its
 * port. Anything else, including a missing header, is refused: a browser tricked by DNS rebinding sends
 * the attacker's host name (common practice against DNS rebinding, no source).
 */
export function isAllowedHost(host, port) {
  if (typeof host !== 'string') return false;
  const h = host.toLowerCase();
  return h === `127.0.0.1:${port}` || h === `localhost:${port}`;
}

/** Headers sent with every response. Microphone for the page itself only; every other feature off. */
export function securityHeaders(csp) {
  return {
    'Content-Security-Policy': csp,
    'X-Content-Type-Options': 'nosniff',
    'Cross-Origin-Opener-Policy': 'same-origin',
    'Cross-Origin-Resource-Policy': 'same-origin',
    'Permissions-Policy':
      'microphone=(self), camera=(), geolocation=(), usb=(), serial=(), hid=(), midi=(), payment=(), display-capture=()',
    'Referrer-Policy': 'no-referrer',
    'Cache-Control': 'no-cache',
  };
}

/**
 * The request handler: GET and HEAD of files under build/renderer. A request that fails (a file removed
 * meanwhile, one too large to read) is answered 500, and the server keeps running.
 *
 * @param csp - The Content-Security-Policy string.
 * @param port - A function returning the port listened on (known once listening).
 * @param io - `readFile` (readFileSync) and `resolvePath` (resolveRequestPath), replaceable in tests.
 */
export function createHandler(csp, port, io = {}) {
  const readFile = io.readFile ?? readFileSync;
  const resolvePath = io.resolvePath ?? resolveRequestPath;
  const headers = securityHeaders(csp);
  return (req, res) => {
    try {
      if (!isAllowedHost(req.headers.host, port())) {
        res
          .writeHead(403, { ...headers, 'Content-Type': 'text/plain; charset=utf-8' })
          .end('forbidden host\n');
        return;
      }
      if (req.method !== 'GET' && req.method !== 'HEAD') {
        res.writeHead(405, { ...headers, Allow: 'GET, HEAD' }).end();
        return;
      }
      const file = resolvePath(req.url ?? '/');
      if (file === null || !existsSync(file) || !statSync(file).isFile()) {
        res.writeHead(404, { ...headers, 'Content-Type': 'text/plain; charset=utf-8' }).end('not found\n');
        return;
      }
      const body = readFile(file);
      res.writeHead(200, {
        ...headers,
        'Content-Type': MIME[path.extname(file).toLowerCase()] ?? 'application/octet-stream',
        'Content-Length': body.length,
      });
      res.end(req.method === 'HEAD' ? undefined : body);
    } catch (err) {
      console.error(
        `web: ${req.method} ${JSON.stringify(req.url)}: ${err instanceof Error ? err.message : String(err)}`,
      );
      if (!res.headersSent) {
        res.writeHead(500, { ...headers, 'Content-Type': 'text/plain; charset=utf-8' }).end('server error\n');
      } else {
        res.destroy();
      }
    }
  };
}

async function main() {
  const args = process.argv.slice(2);
  if (!args.includes('--no-build') && isStale()) {
    console.log('web: building the renderer…');
    const built = await buildRenderer();
    if (!built) throw new Error('renderer/index.html is missing');
  }
  if (!existsSync(path.join(outDir, 'index.html'))) throw new Error('build/renderer/index.html is missing');
  const csp = await loadCsp();
  let boundPort = 0;
  const server = createServer(createHandler(csp, () => boundPort));
  server.on('clientError', (_err, socket) => {
    if (socket.writable) socket.end('HTTP/1.1 400 Bad Request\r\n\r\n');
  });
  const envPort = process.env.PORT;
  const port = envPort === undefined || envPort === '' ? DEFAULT_PORT : Number(envPort);
  if (!Number.isInteger(port) || port < 0 || port > 65535)
    throw new Error(`PORT must be 0…65535, got ${envPort}`);
  server.on('error', (err) => {
    console.error(`web: ${err.message}`);
    process.exit(1);
  });
  server.listen(port, '127.0.0.1', () => {
    const addr = server.address();
    boundPort = addr.port;
    console.log(`web: Spanmeter is at http://127.0.0.1:${addr.port}/`);
  });
  const stop = () => {
    server.close(() => process.exit(0));
    server.closeAllConnections?.();
    setTimeout(() => process.exit(0), 1000).unref();
  };
  process.on('SIGTERM', stop);
  process.on('SIGINT', stop);
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) {
  main().catch((err) => {
    console.error(`web: ${err instanceof Error ? err.message : String(err)}`);
    process.exit(1);
  });
}
