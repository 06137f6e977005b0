/** The page's `localStorage`, or null where the page may not use it (a sandboxed frame, say). */
import type { SetupStorage } from '../lib/setup.ts';

/** `window.localStorage`, or null where the page may not use it. */
export function pageStorage(): SetupStorage | null {
  try {
    return window.localStorage;
  } catch {
    return null;
  }
}
