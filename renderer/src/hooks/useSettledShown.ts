/**
 * Whether the readout may say "Settled": the engine's plateau detector says so, and, on the simulator,
 * the control voltage has not moved in the last half second (the detector's window still holds the old
 * pitch for a moment after a step, so it would otherwise say "Settled" while the voltage moves).
 */
import { useRef } from 'react';

/** How long after the control voltage moved the readout keeps saying "Moving", s. */
export const CV_QUIET_SECONDS = 0.5;

export function useSettledShown(settled: boolean, simVolts: number | null, streamSeconds: number): boolean {
  const last = useRef<{ v: number | null; t: number }>({ v: simVolts, t: -Infinity });
  if (simVolts !== last.current.v) last.current = { v: simVolts, t: streamSeconds };
  return settled && (simVolts === null || streamSeconds - last.current.t >= CV_QUIET_SECONDS);
}
