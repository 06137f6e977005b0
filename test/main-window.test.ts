import { describe, expect, it } from 'vitest';
import { MIN_WINDOW_SIZE, devToolsRule, menuTemplate, windowOptions } from '../main/window.ts';

const options = windowOptions('/opt/spanmeter/build/main/preload.cjs');
const prefs = options.webPreferences ?? {};

describe('windowOptions', () => {
  // Each row: a webPreferences flag, the value the Electron security checklist asks for, and the
  // checklist item (https://www.electronjs.org/docs/latest/tutorial/security).
  it.each([
    ['nodeIntegration', false, 'item 2: do not enable Node.js integration'],
    ['nodeIntegrationInWorker', false, 'item 2: no Node.js in workers either'],
    ['nodeIntegrationInSubFrames', false, 'item 2: nor in sub-frames'],
    ['contextIsolation', true, 'item 3: enable context isolation'],
    ['sandbox', true, 'item 4: enable process sandboxing'],
    ['webSecurity', true, 'item 6: do not disable webSecurity'],
    ['allowRunningInsecureContent', false, 'item 8: do not enable allowRunningInsecureContent'],
    ['experimentalFeatures', false, 'item 9: do not enable experimental features'],
    ['webviewTag', false, 'items 11–12: no <webview>'],
    ['navigateOnDragDrop', false, 'item 13: a dropped file must not navigate the window'],
    ['spellcheck', false, 'brief: no spellchecker'],
  ] as Array<[keyof typeof prefs, boolean, string]>)('%s is written out as %s (%s)', (key, expected) => {
    expect(Object.hasOwn(prefs, key)).toBe(true);
    expect(prefs[key]).toBe(expected);
  });

  it('never sets enableBlinkFeatures (checklist item 10)', () => {
    expect(Object.hasOwn(prefs, 'enableBlinkFeatures')).toBe(false);
  });

  it('uses the given preload', () => {
    expect(prefs.preload).toBe('/opt/spanmeter/build/main/preload.cjs');
  });

  it('is at least 1280×720, dark, and hidden until ready-to-show', () => {
    expect(options.minWidth).toBe(1280);
    expect(options.minHeight).toBe(720);
    expect(MIN_WINDOW_SIZE).toEqual({ width: 1280, height: 720 });
    expect(options.width).toBeGreaterThanOrEqual(1280);
    expect(options.height).toBeGreaterThanOrEqual(720);
    expect(options.show).toBe(false);
    // Dark: relative luminance below 0.05 (WCAG 2.1 definition of relative luminance).
    const hex = String(options.backgroundColor).replace('#', '');
    const [r, g, b] = [0, 2, 4].map((i) => parseInt(hex.slice(i, i + 2), 16) / 255);
    const lin = (c: number) => (c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4);
    expect(0.2126 * lin(r) + 0.7152 * lin(g) + 0.0722 * lin(b)).toBeLessThan(0.05);
  });

  it('refuses an empty preload path, naming the value', () => {
    expect(() => windowOptions('')).toThrow('windowOptions: preloadPath must be a non-empty path, got ""');
  });
});

describe('developer tools in packaged builds', () => {
  const roles = (template: ReturnType<typeof menuTemplate>): string[] =>
    template.flatMap((m) => (Array.isArray(m.submenu) ? m.submenu.map((i) => String(i.role ?? i.type)) : []));

  it.each(['linux', 'win32', 'darwin'])(
    'a packaged build on %s has no developer-tools or reload item',
    (platform) => {
      const r = roles(menuTemplate(true, platform));
      expect(r).not.toContain('toggleDevTools');
      expect(r).not.toContain('reload');
      expect(r).not.toContain('forceReload');
      expect(r).toContain('copy');
    },
  );

  it('a development build keeps them', () => {
    expect(roles(menuTemplate(false, 'linux'))).toContain('toggleDevTools');
  });

  it('a packaged window cannot open the developer tools at all (webPreferences.devTools)', () => {
    expect(windowOptions('/opt/spanmeter/build/main/preload.cjs', true).webPreferences?.devTools).toBe(false);
    expect(devToolsRule(false)).toEqual({ devTools: true });
  });
});
