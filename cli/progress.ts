/**
 * Progress on stderr for a long analysis: shown only when stderr is a terminal and the work has taken
 * more than {@link PROGRESS_AFTER_MS}, updated a few times a second on one line, and erased at the end, so
 * a pipe or a log never sees it.
 */

/** Progress appears only after this long, ms. */
export const PROGRESS_AFTER_MS = 2000;
/** Shortest interval between updates, ms. */
const UPDATE_MS = 250;

/** Where progress goes: a stream with `isTTY` and `write` (process.stderr by default). */
export interface ProgressStream {
  readonly isTTY?: boolean;
  write(text: string): unknown;
}

/** A progress line: call `update(fraction)` as work proceeds and `done()` at the end. */
export interface Progress {
  update(fraction: number): void;
  done(): void;
}

/**
 * A progress line for reading a file.
 *
 * @param label - What is being done: `reading take.wav`.
 * @param stream - Where to write (stderr); nothing is written unless `stream.isTTY`.
 * @param now - Clock, ms (for tests).
 * @example const p = progressLine('reading take.wav'); p.update(0.5); p.done();
 */
export function progressLine(
  label: string,
  stream: ProgressStream = process.stderr,
  now: () => number = Date.now,
): Progress {
  const start = now();
  let last = -Infinity;
  let shown = false;
  return {
    update(fraction) {
      if (!stream.isTTY) return;
      const t = now();
      if (t - start < PROGRESS_AFTER_MS || t - last < UPDATE_MS) return;
      last = t;
      shown = true;
      const pct = Math.max(0, Math.min(100, Math.floor(fraction * 100)));
      const elapsed = (t - start) / 1000;
      const left = fraction > 0 ? (elapsed * (1 - fraction)) / fraction : NaN;
      const eta = Number.isFinite(left) ? `, about ${Math.ceil(left)} s left` : '';
      stream.write(`\r${label}: ${pct} %${eta}\u001b[K`);
    },
    done() {
      if (shown) stream.write('\r\u001b[K');
      shown = false;
    },
  };
}
