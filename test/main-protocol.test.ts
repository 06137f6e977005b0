import { mkdir, mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import {
  APP_SCHEME_PRIVILEGES,
  createAppProtocolHandler,
  mimeTypeFor,
  resolveInside,
} from '../main/protocol.ts';
import { CONTENT_SECURITY_POLICY } from '../main/security.ts';

// Electron security checklist item 18 (https://www.electronjs.org/docs/latest/tutorial/security):
// a custom protocol instead of file://, so the page reaches only the files of one folder, which
// holds only if the resolver below never leaves it.

const root = path.resolve('/srv/spanmeter/renderer');

describe('resolveInside', () => {
  it.each([
    ['/', 'index.html'],
    ['', 'index.html'],
    ['/index.html', 'index.html'],
    ['/assets/index-4f2a.js', 'assets/index-4f2a.js'],
    ['/assets//x.css', 'assets/x.css'],
    ['/./assets/./x.css', 'assets/x.css'],
    ['/fonts/Inter%20Var.woff2', 'fonts/Inter Var.woff2'],
    // Double encoding decodes once, to a literal name inside the folder (RFC 3986 §2.4: decode once).
    ['/%252e%252e/x', '%2e%2e/x'],
  ])('%j → %s inside the root', (urlPath, relative) => {
    expect(resolveInside(root, urlPath)).toEqual({ kind: 'ok', filePath: path.join(root, relative) });
  });

  // Dot segments: RFC 3986 §5.2.4; percent-encoded octets: RFC 3986 §2.1 (%2e is ".", %2f is "/", %5c is "\").
  it.each([
    ['/../etc/passwd', 'the path contains ".." (path traversal)'],
    ['/assets/../../etc/passwd', 'the path contains ".." (path traversal)'],
    ['/%2e%2e/etc/passwd', 'the path contains ".." (path traversal)'],
    ['/%2E%2E/etc/passwd', 'the path contains ".." (path traversal)'],
    ['/.%2e/etc/passwd', 'the path contains ".." (path traversal)'],
    ['/..%2fetc%2fpasswd', 'the path contains ".." (path traversal)'],
    ['/assets%2f..%2f..%2fsecret', 'the path contains ".." (path traversal)'],
    ['/..%5c..%5csecret', 'the path contains a backslash'],
    ['/assets\\..\\..\\secret', 'the path contains a backslash'],
    ['//etc/passwd', 'the path starts with "//"'],
    ['/%2f%2fserver/share', 'the path starts with "//"'],
    ['/C:/Windows/win.ini', 'the path contains ":" (drive letter or stream name)'],
    ['/c%3a/Windows/win.ini', 'the path contains ":" (drive letter or stream name)'],
    ['/index.html:secret', 'the path contains ":" (drive letter or stream name)'],
    ['/index.html%00.png', 'the path contains a NUL character'],
    ['/%E0%A4%A', 'the path has malformed percent-encoding'],
  ])('rejects %j: %s', (urlPath, reason) => {
    expect(resolveInside(root, urlPath)).toEqual({ kind: 'rejected', reason });
  });

  it('throws when the root is relative, naming it', () => {
    expect(() => resolveInside('build/renderer', '/')).toThrow(
      'resolveInside: root must be an absolute path, got "build/renderer"',
    );
  });

  it('never leaves the root, over a sweep of hostile paths', () => {
    const parts = ['..', '%2e%2e', '.%2e', '%2e.', '.', '', 'a', '%2f', '%5c', '%00', 'C:', '~'];
    for (const a of parts) {
      for (const b of parts) {
        for (const c of parts) {
          const result = resolveInside(root, `/${a}/${b}/${c}`);
          if (result.kind === 'ok') {
            const rel = path.relative(root, result.filePath);
            expect(rel.startsWith('..') || path.isAbsolute(rel)).toBe(false);
          }
        }
      }
    }
  });
});

describe('mimeTypeFor', () => {
  it.each([
    ['index.html', 'text/html; charset=utf-8'],
    ['a.js', 'text/javascript; charset=utf-8'], // RFC 9239 §6
    ['worklet.mjs', 'text/javascript; charset=utf-8'], // RFC 9239 §6
    ['a.CSS', 'text/css; charset=utf-8'], // RFC 2318
    ['logo.svg', 'image/svg+xml'], // IANA registry, SVG 1.1 Appendix P
    ['font.woff2', 'font/woff2'], // RFC 8081
    ['m.wasm', 'application/wasm'], // WebAssembly JS API, "application/wasm"
    ['data.json', 'application/json'], // RFC 8259 §11
    ['x.unknown', 'application/octet-stream'], // RFC 2046 §4.5.1
    ['noext', 'application/octet-stream'],
  ])('%s → %s', (file, type) => {
    expect(mimeTypeFor(file)).toBe(type);
  });
});

describe('APP_SCHEME_PRIVILEGES', () => {
  it('is a standard, secure scheme that does not bypass the CSP', () => {
    expect(APP_SCHEME_PRIVILEGES.scheme).toBe('app');
    // getUserMedia and AudioWorklet need a secure context (W3C Media Capture and Streams §9; Web Audio API §1.32).
    expect(APP_SCHEME_PRIVILEGES.privileges).toMatchObject({
      standard: true,
      secure: true,
      bypassCSP: false,
    });
  });
});

describe('createAppProtocolHandler', () => {
  let dir: string;
  let handler: (request: Request) => Promise<Response>;
  beforeAll(async () => {
    dir = await mkdtemp(path.join(tmpdir(), 'spanmeter-protocol-'));
    await mkdir(path.join(dir, 'renderer', 'assets'), { recursive: true });
    await writeFile(path.join(dir, 'renderer', 'index.html'), '<!doctype html><title>Spanmeter</title>');
    await writeFile(path.join(dir, 'renderer', 'assets', 'index.js'), 'console.log(1)');
    await writeFile(path.join(dir, 'secret.txt'), 'outside');
    handler = createAppProtocolHandler({ root: path.join(dir, 'renderer') });
  });
  afterAll(async () => {
    await rm(dir, { recursive: true, force: true });
  });

  const get = (url: string, method = 'GET') => handler(new Request(url, { method }));

  it('serves files with their type and the CSP header', async () => {
    const page = await get('app://spanmeter/');
    expect(page.status).toBe(200);
    expect(page.headers.get('content-type')).toBe('text/html; charset=utf-8');
    expect(page.headers.get('content-security-policy')).toBe(CONTENT_SECURITY_POLICY);
    expect(page.headers.get('x-content-type-options')).toBe('nosniff');
    expect(await page.text()).toContain('<title>Spanmeter</title>');
    const js = await get('app://spanmeter/assets/index.js');
    expect(js.headers.get('content-type')).toBe('text/javascript; charset=utf-8');
    expect(await js.text()).toBe('console.log(1)');
  });

  it.each([
    // The WHATWG URL Standard treats "%2e%2e" as a double-dot segment and removes it while parsing
    // ("double-dot URL path segment"), so this asks for /secret.txt inside the folder: not found.
    ['app://spanmeter/%2e%2e/secret.txt', 'GET', 404],
    ['app://spanmeter/..%2fsecret.txt', 'GET', 403],
    ['app://spanmeter/missing.js', 'GET', 404],
    ['app://spanmeter/assets', 'GET', 404],
    ['app://other/index.html', 'GET', 400],
    ['app://spanmeter/index.html', 'POST', 405],
  ])('%s (%s) → %i, with the CSP header', async (url, method, status) => {
    const res = await get(url, method);
    expect(res.status).toBe(status);
    expect(res.headers.get('content-security-policy')).toBe(CONTENT_SECURITY_POLICY);
    expect(await res.text()).not.toContain('outside');
  });

  it('answers HEAD without a body', async () => {
    const res = await get('app://spanmeter/index.html', 'HEAD');
    expect(res.status).toBe(200);
    expect(await res.text()).toBe('');
  });
});
