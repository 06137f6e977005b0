/**
 * The engine harness of the tests: an EngineCore (the worker's logic, renderer/src/engine/core.ts) run in
 * process, with every message it posts kept in order and a clock that steps 10 ms a call, so nothing depends on
 * how fast the machine is.
 */
import { EngineCore } from '../../renderer/src/engine/core.ts';
import type { FromEngine, RunSnapshot } from '../../renderer/src/engine/protocol.ts';

/** An engine, what it posted, and the last run snapshot among those messages. */
export interface EngineHarness {
  readonly core: EngineCore;
  readonly messages: FromEngine[];
  /** The newest run snapshot posted (in a `run` message or a `tick`), or null before the first. */
  readonly lastRun: () => RunSnapshot | null;
}

/** A new engine harness. */
export function engineHarness(): EngineHarness {
  const messages: FromEngine[] = [];
  let t = 0;
  const core = new EngineCore({ post: (m) => void messages.push(m), nowMs: () => (t += 0.01) });
  const lastRun = (): RunSnapshot | null => {
    for (let i = messages.length - 1; i >= 0; i--) {
      const m = messages[i];
      if (m.type === 'run') return m.run;
      if (m.type === 'tick' && m.run !== undefined) return m.run;
    }
    return null;
  };
  return { core, messages, lastRun };
}
