/**
 * Autosave you can believe: one write in flight at a time, the newest state wins (by a sequence
 * number that only grows, also across reloads, and which the store checks too), and every outcome is
 * reported, so a failure reaches the user with what to do instead of being dropped.
 */
import type { IpcResult } from '../../../main/api-types.ts';

/** What the user is told about the autosave. */
export type AutosaveStatus =
  | { readonly kind: 'idle' }
  | { readonly kind: 'saving'; readonly seq: number }
  | { readonly kind: 'saved'; readonly seq: number; readonly savedAt: string }
  | { readonly kind: 'failed'; readonly seq: number; readonly message: string };

/** Writes one state with its sequence number. */
export type AutosaveWrite<T> = (
  value: T,
  seq: number,
) => Promise<IpcResult<{ savedAt: string; stale?: boolean }>>;

/**
 * A queue of autosaves: {@link AutosaveQueue.push} never waits and never throws; at most one write is in
 * flight; while one is, only the newest pushed state is kept for the next write (older ones are
 * skipped, never written after a newer one).
 *
 * @example const q = new AutosaveQueue((s, seq) => store.autosave(s, seq), setStatus, 'the run'); q.push(state)
 */
export class AutosaveQueue<T> {
  private lastSeq = 0;
  private pending: { value: T; seq: number } | null = null;
  private inFlight: Promise<void> | null = null;
  private idleWaiters: (() => void)[] = [];

  constructor(
    private readonly write: AutosaveWrite<T>,
    private readonly onStatus: (status: AutosaveStatus) => void,
    /** What is saved, for messages ("the run", "the drift log"). */
    private readonly what: string,
    private readonly clock: () => number = Date.now,
  ) {}

  /** The next sequence number: milliseconds since 1970, or one more than the last, whichever is larger. */
  private nextSeq(): number {
    this.lastSeq = Math.max(Math.floor(this.clock()), this.lastSeq + 1);
    return this.lastSeq;
  }

  /** Queues `value` to be saved; returns its sequence number. */
  push(value: T): number {
    const seq = this.nextSeq();
    this.pending = { value, seq };
    if (this.inFlight === null) this.inFlight = this.drain();
    return seq;
  }

  /** Drops what is queued, waits for the write in flight, then runs `clear` (so no older save lands after it). */
  async clear<R>(clear: () => Promise<R>): Promise<R> {
    this.pending = null;
    await this.idle();
    this.nextSeq(); // anything still on its way with an older number is stale
    return clear();
  }

  /** Resolves when nothing is queued or in flight. */
  idle(): Promise<void> {
    if (this.inFlight === null) return Promise.resolve();
    return new Promise((resolve) => this.idleWaiters.push(resolve));
  }

  private async drain(): Promise<void> {
    while (this.pending !== null) {
      const { value, seq } = this.pending;
      this.pending = null;
      this.onStatus({ kind: 'saving', seq });
      let result: IpcResult<{ savedAt: string; stale?: boolean }>;
      try {
        result = await this.write(value, seq);
      } catch (err) {
        result = { ok: false, error: { code: 'internal-error', message: (err as Error).message } };
      }
      if (result.ok) this.onStatus({ kind: 'saved', seq, savedAt: result.value.savedAt });
      else {
        this.onStatus({
          kind: 'failed',
          seq,
          message: `Autosave of ${this.what} failed: ${result.error.message.replace(/\.?$/, '.')} What you see is still on screen: export it now (CSV or JSON) or back up the unit book, and free some disk space; the next change tries again.`,
        });
        // Keep the failed state for the next attempt unless something newer came in meanwhile.
        if (this.pending === null) this.retry = { value, seq };
      }
      if (this.pending === null && this.retry !== null && result.ok) this.retry = null;
    }
    this.inFlight = null;
    for (const w of this.idleWaiters.splice(0)) w();
  }

  /** The state of a failed write, tried again by {@link AutosaveQueue.retryNow}. */
  private retry: { value: T; seq: number } | null = null;

  /** Tries the last failed write again (when nothing newer is queued). */
  retryNow(): void {
    if (this.retry === null || this.pending !== null) return;
    const { value } = this.retry;
    this.retry = null;
    this.push(value);
  }
}
