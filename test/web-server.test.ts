// scripts/web.mjs, the plain-browser server: Host checks against DNS rebinding, the security headers, and a
// request that fails answered 500 while the server keeps running. A real HTTP server on a free port.
import { createServer, request, type Server } from 'node:http';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createHandler, isAllowedHost, securityHeaders } from '../scripts/web.mjs';

let server: Server;
let port = 0;
let dir = '';
let failNext = false;

function get(
  path: string,
  host: string,
): Promise<{ status: number; headers: Record<string, unknown>; body: string }> {
  return new Promise((resolve, reject) => {
    const req = request({ host: '127.0.0.1', port, path, headers: { Host: host } }, (res) => {
      let body = '';
      res.on('data', (c) => (body += String(c)));
      res.on('end', () => resolve({ status: res.statusCode ?? 0, headers: res.headers, body }));
    });
    req.on('error', reject);
    req.end();
  });
}

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'spanmeter-web-'));
  writeFileSync(join(dir, 'index.html'), '<!doctype html><title>x</title>');
  server = createServer(
    createHandler("default-src 'self'", () => port, {
      resolvePath: (url) => (url === '/' ? join(dir, 'index.html') : null),
      readFile: (p) => {
        if (failNext) {
          failNext = false;
          throw new Error('EIO: the file went away');
        }
        return readFileSync(p);
      },
    }),
  );
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', () => r()));
  const addr = server.address();
  port = typeof addr === 'object' && addr ? addr.port : 0;
});

afterAll(async () => {
  await new Promise((r) => server.close(r));
  rmSync(dir, { recursive: true, force: true });
});

describe('isAllowedHost (against DNS rebinding)', () => {
  it.each([
    ['127.0.0.1:5182', true],
    ['localhost:5182', true],
    ['LOCALHOST:5182', true],
    ['127.0.0.1:5183', false],
    ['localhost', false],
    ['evil.example:5182', false],
    ['127.0.0.1.evil.example:5182', false],
    ['[::1]:5182', false],
    [undefined, false],
  ])('%s → %s', (host, ok) => {
    expect(isAllowedHost(host, 5182)).toBe(ok);
  });
});

describe('the server', () => {
  it('serves its own host with the security headers', async () => {
    const r = await get('/', `127.0.0.1:${port}`);
    expect(r.status).toBe(200);
    expect(r.headers['permissions-policy']).toMatch(/microphone=\(self\)/);
    expect(r.headers['permissions-policy']).toMatch(/camera=\(\)/);
    expect(r.headers['cross-origin-resource-policy']).toBe('same-origin');
    expect(r.headers['content-security-policy']).toBe("default-src 'self'");
    expect(Object.keys(securityHeaders('x'))).toContain('Permissions-Policy');
  });

  it('refuses another host name (a rebinding attack) with 403', async () => {
    const r = await get('/', `attacker.example:${port}`);
    expect(r.status).toBe(403);
    expect(r.body).toBe('forbidden host\n');
  });

  it('answers 500 when reading fails, and keeps serving', async () => {
    failNext = true;
    const r = await get('/', `localhost:${port}`);
    expect(r.status).toBe(500);
    expect((await get('/', `localhost:${port}`)).status).toBe(200);
  });

  it('404 for anything else', async () => {
    expect((await get('/nope', `localhost:${port}`)).status).toBe(404);
  });
});
