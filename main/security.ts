/**
 * Security rules of the app, one small function each, and `applySecurity`, which installs them
 * on a session and a webContents passed in as parameters (so tests can pass fakes).
 *
 * Numbers refer to the Electron security checklist,
 * https://www.electronjs.org/docs/latest/tutorial/security ("Checklist: Security recommendations").
 */
import type { HandlerDetails, PermissionCheckHandlerHandlerDetails, PermissionRequest } from 'electron';

/** The custom scheme the renderer is served from (registered as standard and secure). */
export const APP_SCHEME = 'app';
/** The host part of the app's URLs. */
export const APP_HOST = 'spanmeter';
/** The app's origin. Checklist item 18: a custom protocol rather than `file://`. */
export const APP_ORIGIN = `${APP_SCHEME}://${APP_HOST}`;
/** The page the window loads. */
export const APP_PAGE_URL = `${APP_ORIGIN}/index.html`;

/**
 * The Content-Security-Policy sent with every response of the app protocol.
 * Checklist item 7, "Define a Content Security Policy", with restrictive rules:
 * - scripts, AudioWorklet modules (governed by script-src) and workers only from the app itself;
 *   no 'unsafe-eval', no 'unsafe-inline';
 * - styles from the app's own CSS files only (React's `style={{…}}` sets properties through the
 *   CSSOM, which CSP does not restrict, so no 'unsafe-inline' is needed);
 * - images from the app and `data:` URLs; no plugins, no frames, no `<base>`, no form posts;
 * - `connect-src 'self'`: no network at all beyond the app's own files.
 */
export const CONTENT_SECURITY_POLICY = [
  "default-src 'self'",
  "script-src 'self'",
  "worker-src 'self'",
  "style-src 'self'",
  "img-src 'self' data:",
  "font-src 'self'",
  "connect-src 'self'",
  "media-src 'self'",
  "object-src 'none'",
  "frame-src 'none'",
  "base-uri 'none'",
  "form-action 'none'",
  "frame-ancestors 'none'",
].join('; ');

/** Which origins count as the app's own. */
export interface OriginPolicy {
  /**
   * The Vite dev server's origin (e.g. `http://localhost:5173`), in development only. Must be
   * plain http on a loopback host; see {@link parseDevServerOrigin}.
   */
  devServerOrigin?: string;
}

const LOOPBACK_HOSTS = new Set(['localhost', '127.0.0.1', '[::1]']);

function tryParse(url: string): URL | null {
  try {
    return new URL(url);
  } catch {
    return null;
  }
}

/**
 * Checks a development server URL and returns its origin, or `null` when it is not an
 * `http://` URL on a loopback host with an explicit port.
 *
 * @example parseDevServerOrigin('http://localhost:5173/') // → 'http://localhost:5173'
 * @example parseDevServerOrigin('http://192.168.1.20:5173') // → null
 */
export function parseDevServerOrigin(url: string | undefined): string | null {
  if (!url) return null;
  const u = tryParse(url);
  if (!u || u.protocol !== 'http:' || !LOOPBACK_HOSTS.has(u.hostname) || u.port === '') return null;
  if (u.username !== '' || u.password !== '') return null;
  return u.origin;
}

/**
 * True when `url` belongs to the app: the `app://spanmeter` origin exactly (no port, no user
 * info, lowercase as Chromium writes it), or the development server's origin when one is set.
 * Uses a URL parser, not string prefixes, as checklist item 13 advises
 * (`startsWith('app://spanmeter')` would let `app://spanmeter.evil/` through).
 *
 * @param url - a full URL or an origin, untrusted.
 * @example isAllowedOrigin('app://spanmeter/index.html') // → true
 * @example isAllowedOrigin('app://spanmeter.evil.com/') // → false
 * @example isAllowedOrigin('file:///index.html') // → false
 */
export function isAllowedOrigin(url: string, policy: OriginPolicy = {}): boolean {
  if (typeof url !== 'string') return false;
  const u = tryParse(url);
  if (!u) return false;
  if (u.protocol === `${APP_SCHEME}:`) {
    // WHATWG URL gives non-special schemes an opaque origin ("null"), so compare the parts.
    return u.host === APP_HOST && u.username === '' && u.password === '';
  }
  const dev = parseDevServerOrigin(policy.devServerOrigin);
  return dev !== null && u.origin === dev && u.username === '' && u.password === '';
}

/**
 * Checklist item 13, "Disable or limit navigation": the only page the window may show is the
 * app's own `index.html` (or the dev server's root page in development).
 *
 * @example shouldAllowNavigation('app://spanmeter/index.html') // → true
 * @example shouldAllowNavigation('https://example.com/') // → false
 */
export function shouldAllowNavigation(url: string, policy: OriginPolicy = {}): boolean {
  if (!isAllowedOrigin(url, policy)) return false;
  const u = tryParse(url);
  return u !== null && (u.pathname === '/' || u.pathname === '/index.html' || u.pathname === '');
}

/**
 * Checklist item 14, "Disable or limit creation of new windows": every `window.open` and
 * `target="_blank"` link is denied. Links are not passed to `shell.openExternal` (item 15).
 *
 * @example windowOpenHandler({ url: 'https://example.com' }) // → { action: 'deny' }
 */
export function windowOpenHandler(_details: Pick<HandlerDetails, 'url'>): { action: 'deny' } {
  return { action: 'deny' };
}

/** The only media type the app ever needs: the microphone (line input of an audio interface). */
function onlyAudio(mediaTypes: readonly string[] | undefined): boolean {
  return Array.isArray(mediaTypes) && mediaTypes.length > 0 && mediaTypes.every((t) => t === 'audio');
}

/**
 * Permissions the drive needs (renderer/src/drive): `midi` for Web MIDI to a MIDI-to-CV converter (never
 * `midiSysex`: the drive sends notes and pitch bend only) and `speaker-selection` for choosing the DC
 * output's device (`AudioContext.setSinkId`). Checklist item 5 again: granted to the app's own page only.
 */
export const DRIVE_PERMISSIONS: readonly string[] = Object.freeze(['midi', 'speaker-selection']);

/**
 * True for a permission the drive needs ({@link DRIVE_PERMISSIONS}); `midiSysex` is not one.
 *
 * @example isDrivePermission('midi') // → true
 * @example isDrivePermission('midiSysex') // → false
 */
export function isDrivePermission(permission: string): boolean {
  return DRIVE_PERMISSIONS.includes(permission);
}

/** The drive's permissions: the main frame of the app's own page, as for audio capture. */
function driveAllowed(
  url: string,
  details: { isMainFrame?: boolean; requestingUrl?: string; securityOrigin?: string },
  policy: OriginPolicy,
): boolean {
  if (details.isMainFrame === false) return false;
  if (!isAllowedOrigin(url, policy)) return false;
  if (details.requestingUrl !== undefined && !isAllowedOrigin(details.requestingUrl, policy)) return false;
  if (details.securityOrigin !== undefined && !isAllowedOrigin(details.securityOrigin, policy)) return false;
  return true;
}

/** What a permission request's details may hold (Electron passes one of several shapes). */
export type PermissionRequestDetails = Partial<PermissionRequest> & {
  mediaTypes?: readonly string[];
  securityOrigin?: string;
};

/**
 * Checklist item 5, "Handle session permission requests from remote content": grant `media`
 * with `mediaTypes` exactly `['audio']` (one or more `'audio'`), and the drive's `midi` and
 * `speaker-selection`, asked by the main frame of the app's own page; deny video, screen capture,
 * system-exclusive MIDI and every other permission.
 *
 * @param permission - Electron's permission name, e.g. `'media'`, `'geolocation'`.
 * @param requestingUrl - URL of the page asking (`webContents.getURL()`).
 * @param details - Electron's request details (`mediaTypes`, `requestingUrl`, `securityOrigin`, `isMainFrame`).
 * @example permissionDecision('media', 'app://spanmeter/index.html', { mediaTypes: ['audio'], isMainFrame: true }) // → true
 * @example permissionDecision('media', 'app://spanmeter/index.html', { mediaTypes: ['audio', 'video'], isMainFrame: true }) // → false
 */
export function permissionDecision(
  permission: string,
  requestingUrl: string,
  details: PermissionRequestDetails,
  policy: OriginPolicy = {},
): boolean {
  if (isDrivePermission(permission)) return driveAllowed(requestingUrl, details, policy);
  if (permission !== 'media') return false;
  if (!onlyAudio(details.mediaTypes)) return false;
  if (details.isMainFrame === false) return false;
  if (!isAllowedOrigin(requestingUrl, policy)) return false;
  if (details.requestingUrl !== undefined && !isAllowedOrigin(details.requestingUrl, policy)) return false;
  if (details.securityOrigin !== undefined && !isAllowedOrigin(details.securityOrigin, policy)) return false;
  return true;
}

/**
 * The same rule for Chromium's synchronous permission checks (`setPermissionCheckHandler`): true
 * only for `media` with `mediaType` `'audio'`, and for `midi` and `speaker-selection`, from the app's
 * own origin.
 *
 * @param permission - Electron's permission name.
 * @param requestingOrigin - origin of the frame checking, e.g. `'app://spanmeter'`.
 * @param details - Electron's check details (`mediaType`, `securityOrigin`, `requestingUrl`, `isMainFrame`).
 * @example permissionCheck('media', 'app://spanmeter', { mediaType: 'audio', isMainFrame: true }) // → true
 * @example permissionCheck('notifications', 'app://spanmeter', { isMainFrame: true }) // → false
 */
export function permissionCheck(
  permission: string,
  requestingOrigin: string,
  details: Partial<PermissionCheckHandlerHandlerDetails>,
  policy: OriginPolicy = {},
): boolean {
  if (isDrivePermission(permission)) return driveAllowed(requestingOrigin, details, policy);
  if (permission !== 'media' || details.mediaType !== 'audio') return false;
  if (details.isMainFrame === false) return false;
  if (!isAllowedOrigin(requestingOrigin, policy)) return false;
  if (details.requestingUrl !== undefined && !isAllowedOrigin(details.requestingUrl, policy)) return false;
  if (details.securityOrigin !== undefined && !isAllowedOrigin(details.securityOrigin, policy)) return false;
  return true;
}

/**
 * Checklist item 17, "Validate the sender of all IPC messages": true when the frame that sent the
 * IPC message is a top-level frame showing the app's own page.
 *
 * @example isTrustedSenderFrame({ url: 'app://spanmeter/index.html', parent: null }) // → true
 * @example isTrustedSenderFrame(null) // → false
 */
export function isTrustedSenderFrame(
  frame: { readonly url: string; readonly parent?: unknown } | null | undefined,
  policy: OriginPolicy = {},
): boolean {
  if (!frame) return false;
  if (frame.parent !== undefined && frame.parent !== null) return false;
  return isAllowedOrigin(frame.url, policy);
}

// ---------------------------------------------------------------------------------------------
// Wiring

/** The part of Electron's `Session` that {@link applySecurity} uses. */
export interface SessionLike {
  setPermissionRequestHandler(
    handler: (
      webContents: { getURL(): string },
      permission: string,
      callback: (granted: boolean) => void,
      details: PermissionRequestDetails,
    ) => void,
  ): void;
  setPermissionCheckHandler(
    handler: (
      webContents: unknown,
      permission: string,
      requestingOrigin: string,
      details: Partial<PermissionCheckHandlerHandlerDetails>,
    ) => boolean,
  ): void;
  /** HID, serial and USB device access. */
  setDevicePermissionHandler?(handler: () => boolean): void;
}

/** An event that can be cancelled, as Electron's navigation events are. */
export interface PreventableEvent {
  preventDefault(): void;
}

/** The part of Electron's `WebContents` that {@link applySecurity} uses. */
export interface WebContentsLike {
  on(
    event: 'will-navigate' | 'will-redirect',
    listener: (event: PreventableEvent & { url: string }) => void,
  ): unknown;
  on(event: 'will-attach-webview', listener: (event: PreventableEvent) => void): unknown;
  setWindowOpenHandler(handler: (details: HandlerDetails) => { action: 'deny' }): void;
}

export interface SecurityDeps {
  /** True in development: blocked navigations and permissions are then logged. */
  isDev: boolean;
  /** Where the development log goes (console.warn in main.ts). */
  log(line: string): void;
  policy?: OriginPolicy;
  /**
   * Called after a media request passed {@link permissionDecision} and before it is granted; on
   * macOS main.ts passes `systemPreferences.askForMediaAccess('microphone')`, so the system
   * prompt appears before capture starts. Resolves to the final answer.
   */
  confirmMicrophoneAccess?(): Promise<boolean>;
}

/**
 * Installs the session's permission handlers (checklist item 5).
 * Call once per session, before any window loads.
 */
export function applySessionSecurity(session: SessionLike, deps: SecurityDeps): void {
  const policy = deps.policy ?? {};
  session.setPermissionRequestHandler((webContents, permission, callback, details) => {
    let url = '';
    try {
      url = webContents.getURL();
    } catch {
      url = '';
    }
    if (!permissionDecision(permission, url, details ?? {}, policy)) {
      if (deps.isDev) deps.log(`[security] denied permission "${permission}" for ${url || '(unknown page)'}`);
      callback(false);
      return;
    }
    if (!deps.confirmMicrophoneAccess || permission !== 'media') {
      callback(true);
      return;
    }
    deps.confirmMicrophoneAccess().then(
      (granted) => callback(granted),
      () => callback(false),
    );
  });
  session.setPermissionCheckHandler((_webContents, permission, requestingOrigin, details) =>
    permissionCheck(permission, requestingOrigin, details ?? {}, policy),
  );
  session.setDevicePermissionHandler?.(() => false);
}

/**
 * Installs the navigation guard (item 13), the redirect guard, the `<webview>` block (item 12)
 * and the new-window handler (item 14) on one webContents. Blocked navigation is logged in
 * development only.
 */
export function applyWebContentsSecurity(webContents: WebContentsLike, deps: SecurityDeps): void {
  const policy = deps.policy ?? {};
  const guard = (kind: string) => (event: PreventableEvent & { url: string }) => {
    if (shouldAllowNavigation(event.url, policy)) return;
    event.preventDefault();
    if (deps.isDev) deps.log(`[security] blocked ${kind} to ${event.url}`);
  };
  webContents.on('will-navigate', guard('navigation'));
  webContents.on('will-redirect', guard('redirect'));
  // Item 12: the app uses no <webview>; webviewTag is false too, this is belt and braces.
  webContents.on('will-attach-webview', (event) => {
    event.preventDefault();
    if (deps.isDev) deps.log('[security] blocked a <webview>');
  });
  webContents.setWindowOpenHandler((details) => {
    if (deps.isDev) deps.log(`[security] blocked a new window for ${details.url}`);
    return windowOpenHandler(details);
  });
}

/**
 * Installs every rule: the session's permission handlers and the webContents guards.
 *
 * @param session - Electron's `session.defaultSession` (or a fake).
 * @param webContents - the window's `webContents` (or a fake).
 * @param deps - development flag, logger, origin policy, macOS microphone prompt.
 */
export function applySecurity(session: SessionLike, webContents: WebContentsLike, deps: SecurityDeps): void {
  applySessionSecurity(session, deps);
  applyWebContentsSecurity(webContents, deps);
}
