/**
 * Light or dark theme, kept between sessions; dark until the user picks light (a bench display in a
 * dim workshop; the light theme is one click away in the top bar). The
 * theme is the `data-theme` attribute of the page's root element (styles.css holds both palettes).
 */
import { useEffect, useState } from 'react';
import { pageStorage } from './pageStorage.ts';

export type Theme = 'light' | 'dark';

/** Where the theme is kept. */
export const THEME_KEY = 'spanmeter.theme.v1';

function initialTheme(): Theme {
  try {
    const t = pageStorage()?.getItem(THEME_KEY);
    if (t === 'light' || t === 'dark') return t;
  } catch {
    // storage refused: fall through to the system's preference
  }
  return 'dark';
}

export function useTheme(): [Theme, (t: Theme) => void] {
  const [theme, setTheme] = useState<Theme>(initialTheme);
  useEffect(() => {
    document.documentElement.dataset.theme = theme;
    try {
      pageStorage()?.setItem(THEME_KEY, theme);
    } catch {
      // not kept: the theme still applies now
    }
  }, [theme]);
  return [theme, setTheme];
}
