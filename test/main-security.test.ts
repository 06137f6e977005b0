import { describe, expect, it } from 'vitest';
import {
  APP_ORIGIN,
  APP_PAGE_URL,
  CONTENT_SECURITY_POLICY,
  applySecurity,
  isAllowedOrigin,
  isTrustedSenderFrame,
  parseDevServerOrigin,
  permissionCheck,
  permissionDecision,
  shouldAllowNavigation,
  windowOpenHandler,
  type PermissionRequestDetails,
  type SessionLike,
  type WebContentsLike,
} from '../main/security.ts';

// Numbers refer to the Electron security checklist, https://www.electronjs.org/docs/latest/tutorial/security.

/** Splits a policy into directive name → source list (W3C CSP Level 3, §2.2 "parse a serialized CSP"). */
function parseCsp(policy: string): Map<string, string[]> {
  const out = new Map<string, string[]>();
  for (const part of policy.split(';')) {
    const tokens = part.trim().split(/\s+/).filter(Boolean);
    if (tokens.length === 0) continue;
    const name = tokens[0].toLowerCase();
    if (!out.has(name)) out.set(name, tokens.slice(1));
  }
  return out;
}

describe('CONTENT_SECURITY_POLICY (checklist item 7)', () => {
  const csp = parseCsp(CONTENT_SECURITY_POLICY);

  it.each([
    ['default-src', ["'self'"]],
    ['script-src', ["'self'"]],
    ['worker-src', ["'self'"]],
    ['style-src', ["'self'"]],
    ['img-src', ["'self'", 'data:']],
    ['connect-src', ["'self'"]],
    ['object-src', ["'none'"]],
    ['base-uri', ["'none'"]],
    ['form-action', ["'none'"]],
    ['frame-ancestors', ["'none'"]],
  ])('%s is %j', (directive, sources) => {
    expect(csp.get(directive)).toEqual(sources);
  });

  it("never allows 'unsafe-eval', 'unsafe-inline', wildcards or remote hosts", () => {
    expect(CONTENT_SECURITY_POLICY).not.toContain("'unsafe-eval'");
    expect(CONTENT_SECURITY_POLICY).not.toContain("'unsafe-inline'");
    expect(CONTENT_SECURITY_POLICY).not.toMatch(/(^|\s)\*(\s|;|$)/);
    expect(CONTENT_SECURITY_POLICY).not.toMatch(/https?:/);
  });

  it('names each directive once (a repeated directive is ignored: CSP Level 3, §2.2)', () => {
    const names = CONTENT_SECURITY_POLICY.split(';').map((p) => p.trim().split(/\s+/)[0]);
    expect(new Set(names).size).toBe(names.length);
  });
});

describe('isAllowedOrigin', () => {
  it.each([APP_PAGE_URL, `${APP_ORIGIN}/`, APP_ORIGIN, 'app://spanmeter/assets/index-4f2a.js'])(
    'allows %s',
    (url) => {
      expect(isAllowedOrigin(url)).toBe(true);
    },
  );

  // Lookalikes: the checklist (item 13) warns that prefix tests let `https://example.com.attacker.com`
  // through; the WHATWG URL Standard decides what the host is.
  it.each([
    'app://spanmeter.evil.example/index.html',
    'app://spanmeter-evil/index.html',
    'app://evilspanmeter/index.html',
    'app://spanmeter:8080/index.html',
    'app://user@spanmeter/index.html',
    'app://spanmeter@evil.example/index.html',
    'app://SPANMETER/index.html',
    'https://spanmeter/index.html',
    'http://spanmeter/index.html',
    'file:///opt/spanmeter/build/renderer/index.html',
    'file://spanmeter/index.html',
    'http://127.0.0.1:5173/',
    'http://localhost:5173/',
    'devtools://devtools/bundled/inspector.html',
    'chrome://settings',
    'about:blank',
    'data:text/html,<h1>x</h1>',
    'javascript:alert(1)',
    '',
    'not a url',
  ])('denies %s', (url) => {
    expect(isAllowedOrigin(url)).toBe(false);
  });

  it('allows the dev server only when it is configured, and only that origin', () => {
    const policy = { devServerOrigin: 'http://127.0.0.1:5173' };
    expect(isAllowedOrigin('http://127.0.0.1:5173/', policy)).toBe(true);
    expect(isAllowedOrigin('http://127.0.0.1:5174/', policy)).toBe(false);
    expect(isAllowedOrigin('http://localhost:5173/', policy)).toBe(false);
    expect(isAllowedOrigin('https://127.0.0.1:5173/', policy)).toBe(false);
    expect(isAllowedOrigin('http://127.0.0.1:5173/', {})).toBe(false);
  });

  it.each([
    ['http://localhost:5173/', 'http://localhost:5173'],
    ['http://127.0.0.1:5173', 'http://127.0.0.1:5173'],
    ['http://[::1]:5173/', 'http://[::1]:5173'],
    ['http://192.168.1.20:5173/', null],
    ['https://localhost:5173/', null],
    ['http://localhost/', null],
    ['http://localhost.evil.example:5173/', null],
    [undefined, null],
  ])('parseDevServerOrigin(%s) → %s (loopback http with a port only)', (url, expected) => {
    expect(parseDevServerOrigin(url)).toBe(expected);
  });
});

describe('shouldAllowNavigation (checklist item 13)', () => {
  it.each([APP_PAGE_URL, `${APP_ORIGIN}/`])('allows the app page %s', (url) => {
    expect(shouldAllowNavigation(url)).toBe(true);
  });
  it.each([
    'https://example.com/',
    'app://spanmeter/other.html',
    'app://spanmeter/assets/index.js',
    'app://spanmeter.evil.example/index.html',
    'file:///etc/passwd',
    'http://127.0.0.1:5173/',
  ])('denies %s', (url) => {
    expect(shouldAllowNavigation(url)).toBe(false);
  });
});

describe('windowOpenHandler (checklist item 14)', () => {
  it.each(['https://example.com/', APP_PAGE_URL, 'file:///etc/passwd'])('denies %s', (url) => {
    expect(windowOpenHandler({ url })).toEqual({ action: 'deny' });
  });
});

describe('permissionDecision (checklist item 5)', () => {
  const own = APP_PAGE_URL;
  const main = { isMainFrame: true, requestingUrl: own };
  const cases: Array<[string, string, string, PermissionRequestDetails, boolean]> = [
    ['audio from the app page', 'media', own, { ...main, mediaTypes: ['audio'] }, true],
    ['video', 'media', own, { ...main, mediaTypes: ['video'] }, false],
    ['audio and video together', 'media', own, { ...main, mediaTypes: ['audio', 'video'] }, false],
    ['media with no types', 'media', own, { ...main, mediaTypes: [] }, false],
    ['media with types missing', 'media', own, { ...main }, false],
    [
      'audio from another origin',
      'media',
      'https://example.com/',
      { isMainFrame: true, requestingUrl: 'https://example.com/', mediaTypes: ['audio'] },
      false,
    ],
    [
      'audio from a lookalike host',
      'media',
      'app://spanmeter.evil/',
      { isMainFrame: true, mediaTypes: ['audio'] },
      false,
    ],
    [
      'audio from file://',
      'media',
      'file:///x/index.html',
      { isMainFrame: true, mediaTypes: ['audio'] },
      false,
    ],
    [
      'audio from a sub-frame',
      'media',
      own,
      { isMainFrame: false, requestingUrl: own, mediaTypes: ['audio'] },
      false,
    ],
    [
      'audio whose details name another page',
      'media',
      own,
      { isMainFrame: true, requestingUrl: 'https://example.com/', mediaTypes: ['audio'] },
      false,
    ],
    [
      'audio whose security origin is another',
      'media',
      own,
      { ...main, mediaTypes: ['audio'], securityOrigin: 'https://example.com' },
      false,
    ],
    ['geolocation', 'geolocation', own, main, false],
    ['notifications', 'notifications', own, main, false],
    ['screen capture', 'display-capture', own, { ...main, mediaTypes: ['audio'] }, false],
    // The drive (issue 12): MIDI without sysex and output-device selection, for the app's own page only.
    ['MIDI', 'midi', own, main, true],
    ['MIDI with system-exclusive messages', 'midiSysex', own, main, false],
    ['MIDI from another page', 'midi', 'https://example.com/', main, false],
    ['MIDI from a sub-frame', 'midi', own, { isMainFrame: false, requestingUrl: own }, false],
    ['output device selection', 'speaker-selection', own, main, true],
    ['output device selection from another page', 'speaker-selection', 'https://example.com/', main, false],
    ['clipboard read', 'clipboard-read', own, main, false],
    ['openExternal', 'openExternal', own, main, false],
    ['fullscreen', 'fullscreen', own, main, false],
  ];
  it.each(cases)('%s → %s', (_name, permission, url, details, expected) => {
    expect(permissionDecision(permission, url, details)).toBe(expected);
  });
});

describe('permissionCheck (checklist item 5)', () => {
  it.each([
    ['media', APP_ORIGIN, { isMainFrame: true, mediaType: 'audio' as const }, true],
    ['media', APP_ORIGIN, { isMainFrame: true, mediaType: 'video' as const }, false],
    ['media', APP_ORIGIN, { isMainFrame: true, mediaType: 'unknown' as const }, false],
    ['media', 'https://example.com', { isMainFrame: true, mediaType: 'audio' as const }, false],
    ['media', APP_ORIGIN, { isMainFrame: false, mediaType: 'audio' as const }, false],
    ['geolocation', APP_ORIGIN, { isMainFrame: true }, false],
    ['notifications', APP_ORIGIN, { isMainFrame: true }, false],
    ['serial', APP_ORIGIN, { isMainFrame: true }, false],
    ['midi', APP_ORIGIN, { isMainFrame: true }, true],
    ['midiSysex', APP_ORIGIN, { isMainFrame: true }, false],
    ['midi', 'https://example.com', { isMainFrame: true }, false],
    ['speaker-selection', APP_ORIGIN, { isMainFrame: true }, true],
    ['speaker-selection', APP_ORIGIN, { isMainFrame: false }, false],
  ])('%s from %s %j → %s', (permission, origin, details, expected) => {
    expect(permissionCheck(permission, origin, details)).toBe(expected);
  });
});

describe('isTrustedSenderFrame (checklist item 17)', () => {
  it.each([
    [{ url: APP_PAGE_URL, parent: null }, true],
    [{ url: APP_PAGE_URL }, true],
    [{ url: APP_PAGE_URL, parent: { url: APP_PAGE_URL } }, false],
    [{ url: 'https://example.com/', parent: null }, false],
    [{ url: 'file:///index.html', parent: null }, false],
    [null, false],
  ])('%j → %s', (frame, expected) => {
    expect(isTrustedSenderFrame(frame)).toBe(expected);
  });
});

// A fake session and webContents recording what applySecurity installs.
function fakes() {
  const session = {
    request: undefined as undefined | Parameters<SessionLike['setPermissionRequestHandler']>[0],
    check: undefined as undefined | Parameters<SessionLike['setPermissionCheckHandler']>[0],
    device: undefined as undefined | (() => boolean),
    setPermissionRequestHandler(h: Parameters<SessionLike['setPermissionRequestHandler']>[0]) {
      this.request = h;
    },
    setPermissionCheckHandler(h: Parameters<SessionLike['setPermissionCheckHandler']>[0]) {
      this.check = h;
    },
    setDevicePermissionHandler(h: () => boolean) {
      this.device = h;
    },
  };
  const listeners = new Map<string, (event: { url?: string; preventDefault(): void }) => void>();
  let openHandler: ((d: { url: string }) => { action: 'deny' }) | undefined;
  const webContents = {
    on(name: string, listener: (event: { url?: string; preventDefault(): void }) => void) {
      listeners.set(name, listener);
      return webContents;
    },
    setWindowOpenHandler(h: (d: { url: string }) => { action: 'deny' }) {
      openHandler = h;
    },
  };
  const fire = (name: string, url?: string) => {
    let prevented = false;
    listeners.get(name)?.({ url, preventDefault: () => (prevented = true) });
    return prevented;
  };
  return {
    session,
    webContents: webContents as unknown as WebContentsLike,
    fire,
    open: (url: string) => openHandler?.({ url }),
  };
}

function request(
  session: ReturnType<typeof fakes>['session'],
  url: string,
  permission: string,
  details: PermissionRequestDetails,
) {
  return new Promise<boolean>((resolve) =>
    session.request?.({ getURL: () => url }, permission, resolve, details),
  );
}

describe('applySecurity wiring', () => {
  it('installs permission handlers that grant only audio to the app page', async () => {
    const f = fakes();
    applySecurity(f.session, f.webContents, { isDev: false, log: () => {} });
    expect(
      await request(f.session, APP_PAGE_URL, 'media', { isMainFrame: true, mediaTypes: ['audio'] }),
    ).toBe(true);
    expect(
      await request(f.session, APP_PAGE_URL, 'media', { isMainFrame: true, mediaTypes: ['video'] }),
    ).toBe(false);
    expect(
      await request(f.session, 'https://example.com/', 'media', { isMainFrame: true, mediaTypes: ['audio'] }),
    ).toBe(false);
    expect(f.session.check?.(null, 'media', APP_ORIGIN, { isMainFrame: true, mediaType: 'audio' })).toBe(
      true,
    );
    expect(f.session.check?.(null, 'geolocation', APP_ORIGIN, { isMainFrame: true })).toBe(false);
    expect(f.session.device?.()).toBe(false);
  });

  it('asks the system for the microphone before granting, and follows its answer (macOS)', async () => {
    for (const answer of [true, false]) {
      const f = fakes();
      let asked = 0;
      applySecurity(f.session, f.webContents, {
        isDev: false,
        log: () => {},
        confirmMicrophoneAccess: async () => {
          asked++;
          return answer;
        },
      });
      expect(
        await request(f.session, APP_PAGE_URL, 'media', { isMainFrame: true, mediaTypes: ['audio'] }),
      ).toBe(answer);
      expect(
        await request(f.session, APP_PAGE_URL, 'media', { isMainFrame: true, mediaTypes: ['video'] }),
      ).toBe(false);
      expect(asked).toBe(1); // never asked for a request that was denied anyway
      // The drive's permissions (issue 12) are granted without the microphone prompt; sysex never.
      expect(await request(f.session, APP_PAGE_URL, 'midi', { isMainFrame: true })).toBe(true);
      expect(await request(f.session, APP_PAGE_URL, 'speaker-selection', { isMainFrame: true })).toBe(true);
      expect(await request(f.session, APP_PAGE_URL, 'midiSysex', { isMainFrame: true })).toBe(false);
      expect(asked).toBe(1);
    }
  });

  it('blocks navigation, redirects, webviews and new windows (items 12–14); logs only in development', () => {
    for (const isDev of [false, true]) {
      const lines: string[] = [];
      const f = fakes();
      applySecurity(f.session, f.webContents, { isDev, log: (l) => lines.push(l) });
      expect(f.fire('will-navigate', 'https://example.com/')).toBe(true);
      expect(f.fire('will-navigate', APP_PAGE_URL)).toBe(false);
      expect(f.fire('will-redirect', 'https://example.com/')).toBe(true);
      expect(f.fire('will-attach-webview')).toBe(true);
      expect(f.open('https://example.com/')).toEqual({ action: 'deny' });
      if (isDev) {
        expect(lines).toContain('[security] blocked navigation to https://example.com/');
        expect(lines.length).toBe(4);
      } else {
        expect(lines).toEqual([]);
      }
    }
  });
});
