// The scale pair check's pairing of plateaus to sides, and the warm-up hold's one-second bins (moved out of
// the engine into dsp/). Cents are 1200·log2(f1/f2) (Ellis, 1885).
import { describe, expect, it } from 'vitest';
import { DriftBinner } from '../dsp/calibration/index.ts';
import {
  checkPairing,
  EMPTY_PAIRING,
  PAIR_GUARD_CENTS,
  pairingResult,
  pairPlateau,
  SAME_SIDE_CENTS,
} from '../dsp/calibration/index.ts';

describe('pairPlateau', () => {
  it('fills low then high, keeps the lower pitch low, and lets the trimmer move a side', () => {
    let p = pairPlateau(EMPTY_PAIRING, { hz: 520, startSeconds: 1 });
    expect(p).toEqual({ low: { hz: 520, startSeconds: 1 }, high: null });
    p = pairPlateau(p, { hz: 130, startSeconds: 4 });
    expect([p.low?.hz, p.high?.hz]).toEqual([130, 520]);
    // The trimmer moves the high side by 3 cents: same side (well inside SAME_SIDE_CENTS).
    const moved = 520 * Math.pow(2, 3 / 1200);
    p = pairPlateau(p, { hz: moved, startSeconds: 7 });
    expect([p.low?.hz, p.high?.hz]).toEqual([130, moved]);
  });

  it('a new voltage replaces the side heard longer ago', () => {
    const far = 130 * Math.pow(2, (2 * SAME_SIDE_CENTS) / 1200);
    let p = pairPlateau(pairPlateau(EMPTY_PAIRING, { hz: 130, startSeconds: 1 }), {
      hz: 520,
      startSeconds: 4,
    });
    p = pairPlateau(p, { hz: far, startSeconds: 9 });
    expect([p.low?.hz, p.high?.hz]).toEqual([far, 520]);
  });

  it('the interval error once both sides are heard: 1 V to 3 V should be 2400 cents', () => {
    const settings = { voltsLow: 1, voltsHigh: 3, toleranceCents: 1 };
    expect(pairingResult(EMPTY_PAIRING, settings)).toBeNull();
    const high = 130 * Math.pow(2, 2396.8 / 1200);
    const r = pairingResult(
      { low: { hz: 130, startSeconds: 0 }, high: { hz: high, startSeconds: 3 } },
      settings,
    );
    expect(r?.errorCents).toBeCloseTo(-3.2, 9);
    expect(r?.direction).toBe('widen');
  });
});

describe('DriftBinner', () => {
  it('averages each second in cents against the first reading, stamped at the bin middle', () => {
    const b = new DriftBinner();
    expect(b.push(0, 440)).toBeNull(); // before start
    b.start(10, 440);
    const hz = (c: number) => 440 * Math.pow(2, c / 1200);
    expect(b.push(10, hz(0))).toBeNull();
    expect(b.push(10.5, hz(1))).toBeNull();
    const bin = b.push(11, hz(2));
    // Mean of 0, 1 and 2 cents is 1 cent; the bin runs 10…11 s, so its middle is 0.5 s into the hold.
    expect(bin?.timeSeconds).toBeCloseTo(0.5, 12);
    expect(1200 * Math.log2(bin!.hz / 440)).toBeCloseTo(1, 9);
    expect(b.readings).toHaveLength(1);
  });
});

describe('checkPairing (unexpected-pitch guard)', () => {
  const settings = { voltsLow: 1, voltsHigh: 3, toleranceCents: 1 };
  it('gives the interval error when the pair is within the guard of 1200 cents per volt (1 V/oct)', () => {
    // 2 V at 1 V/oct is two octaves (docs/facts.md); 5 cents narrow is well inside the guard.
    const high = 130 * Math.pow(2, (2400 - 5) / 1200);
    const c = checkPairing(
      { low: { hz: 130, startSeconds: 0 }, high: { hz: high, startSeconds: 3 } },
      settings,
    );
    expect(c.unexpected).toBeNull();
    expect(c.result).toEqual(
      pairingResult({ low: { hz: 130, startSeconds: 0 }, high: { hz: high, startSeconds: 3 } }, settings),
    );
  });
  it('gives no instruction when the interval is a whole octave off (a wrong voltage)', () => {
    const c = checkPairing(
      { low: { hz: 130, startSeconds: 0 }, high: { hz: 1040, startSeconds: 3 } },
      settings,
    );
    expect(c.result).toBeNull();
    expect(c.unexpected?.expectedCents).toBe(2400);
    expect(c.unexpected?.measuredCents).toBeCloseTo(3600, 9);
    expect(PAIR_GUARD_CENTS).toBe(150);
  });
  it('is empty until both sides are heard', () => {
    expect(checkPairing(EMPTY_PAIRING, settings)).toEqual({ result: null, unexpected: null });
  });
});
