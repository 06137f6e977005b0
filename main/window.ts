/**
 * The main window's options. Every security setting is written out, even where it is Electron's
 * default, so a reader (and a test) can see it and a future default change cannot flip it.
 * Numbers refer to the Electron security checklist,
 * https://www.electronjs.org/docs/latest/tutorial/security.
 */
import type { BrowserWindowConstructorOptions, MenuItemConstructorOptions, WebPreferences } from 'electron';

/** Smallest window: the measurement view needs 1280×720 logical pixels. */
export const MIN_WINDOW_SIZE = { width: 1280, height: 720 } as const;
/** Painted before the page draws, so the window never flashes white. */
export const WINDOW_BACKGROUND = '#14161a';

/** Item 2, "Do not enable Node.js integration for remote content": no Node in the page or its workers. */
export function nodeIntegrationRule(): Pick<
  WebPreferences,
  'nodeIntegration' | 'nodeIntegrationInWorker' | 'nodeIntegrationInSubFrames'
> {
  return { nodeIntegration: false, nodeIntegrationInWorker: false, nodeIntegrationInSubFrames: false };
}

/** Item 3, "Enable context isolation": the preload and the page run in separate JavaScript worlds. */
export function contextIsolationRule(): Pick<WebPreferences, 'contextIsolation'> {
  return { contextIsolation: true };
}

/** Item 4, "Enable process sandboxing": the renderer (and its preload) run in Chromium's OS sandbox. */
export function sandboxRule(): Pick<WebPreferences, 'sandbox'> {
  return { sandbox: true };
}

/** Item 6, "Do not disable webSecurity": same-origin policy stays on. */
export function webSecurityRule(): Pick<WebPreferences, 'webSecurity'> {
  return { webSecurity: true };
}

/** Item 8, "Do not enable allowRunningInsecureContent": no http content in the secure page. */
export function insecureContentRule(): Pick<WebPreferences, 'allowRunningInsecureContent'> {
  return { allowRunningInsecureContent: false };
}

/**
 * Item 9, "Do not enable experimental features". Item 10, "Do not use enableBlinkFeatures", is
 * kept by never setting `enableBlinkFeatures` at all.
 */
export function experimentalFeaturesRule(): Pick<WebPreferences, 'experimentalFeatures'> {
  return { experimentalFeatures: false };
}

/** Items 11 and 12 (`<webview>`): the tag is disabled, so neither `allowpopups` nor its options arise. */
export function webviewRule(): Pick<WebPreferences, 'webviewTag'> {
  return { webviewTag: false };
}

/**
 * Item 13, "Disable or limit navigation": dropping a file on the window must not navigate to it.
 * Also: no spellchecker (it would send nothing, but there is no free text worth checking and it
 * loads dictionaries), and Chromium's guard against dialog loops.
 */
export function pageBehaviourRule(): Pick<
  WebPreferences,
  'navigateOnDragDrop' | 'spellcheck' | 'safeDialogs'
> {
  return { navigateOnDragDrop: false, spellcheck: false, safeDialogs: true };
}

/**
 * Developer tools only in development: a packaged build has no way to open them (no menu item, no
 * shortcut, no `openDevTools`), so nobody can be talked into pasting code into a console that reaches the
 * records. (Electron's `webPreferences.devTools`; common practice, no source.)
 *
 * @param packaged - `app.isPackaged`.
 * @example devToolsRule(true) // { devTools: false }
 */
export function devToolsRule(packaged: boolean): Pick<WebPreferences, 'devTools'> {
  return { devTools: !packaged };
}

/**
 * The application menu. Electron's default menu carries "Toggle Developer Tools" and "Reload" (which would
 * drop a run in progress); a packaged build gets neither, only editing, zoom, full screen and the window
 * items. Development builds add reload and the developer tools under View.
 *
 * @param packaged - `app.isPackaged`.
 * @param platform - `process.platform` (macOS gets the app menu first).
 * @returns A template for `Menu.buildFromTemplate`.
 * @example menuTemplate(true, 'linux').flatMap((m) => (m.submenu as { role?: string }[]).map((i) => i.role)).includes('toggleDevTools') // false
 */
export function menuTemplate(packaged: boolean, platform: string): MenuItemConstructorOptions[] {
  const view: MenuItemConstructorOptions[] = [
    { role: 'resetZoom' },
    { role: 'zoomIn' },
    { role: 'zoomOut' },
    { type: 'separator' },
    { role: 'togglefullscreen' },
  ];
  if (!packaged) view.push({ type: 'separator' }, { role: 'reload' }, { role: 'toggleDevTools' });
  return [
    ...(platform === 'darwin' ? [{ role: 'appMenu' } as MenuItemConstructorOptions] : []),
    { label: 'File', submenu: [{ role: platform === 'darwin' ? 'close' : 'quit' }] },
    {
      label: 'Edit',
      submenu: [
        { role: 'undo' },
        { role: 'redo' },
        { type: 'separator' },
        { role: 'cut' },
        { role: 'copy' },
        { role: 'paste' },
        { role: 'selectAll' },
      ],
    },
    { label: 'View', submenu: view },
    { label: 'Window', submenu: [{ role: 'minimize' }, { role: 'close' }] },
  ];
}

/**
 * The complete window options.
 *
 * @param preloadPath - absolute path of the bundled preload (`build/main/preload.cjs`).
 * @param packaged - `app.isPackaged`: a packaged build cannot open the developer tools. Default false.
 * @returns options for `new BrowserWindow(...)`; the window stays hidden until `ready-to-show`.
 * @example windowOptions('/app/build/main/preload.cjs').webPreferences?.sandbox // → true
 */
export function windowOptions(preloadPath: string, packaged = false): BrowserWindowConstructorOptions {
  if (typeof preloadPath !== 'string' || preloadPath.length === 0) {
    throw new Error(
      `windowOptions: preloadPath must be a non-empty path, got ${JSON.stringify(preloadPath)}`,
    );
  }
  return {
    title: 'Spanmeter',
    width: 1440,
    height: 900,
    minWidth: MIN_WINDOW_SIZE.width,
    minHeight: MIN_WINDOW_SIZE.height,
    backgroundColor: WINDOW_BACKGROUND,
    // Shown on 'ready-to-show' (main.ts), so the user never sees an empty frame.
    show: false,
    webPreferences: {
      preload: preloadPath,
      ...nodeIntegrationRule(),
      ...contextIsolationRule(),
      ...sandboxRule(),
      ...webSecurityRule(),
      ...insecureContentRule(),
      ...experimentalFeaturesRule(),
      ...webviewRule(),
      ...pageBehaviourRule(),
      ...devToolsRule(packaged),
    },
  };
}
