import { describe, it, expect } from 'vitest';
import {
  TRIM_CAUTION,
  adviseTrim,
  inputNetworkGain,
  scaleCorrectionResistors,
  scalePairIntervalError,
} from '../dsp/advice/index.ts';
import { analyzeBends, fitTracking, type TrackingPoint } from '../dsp/model/index.ts';
import {
  attenuationForOneVoltPerOctave,
  resetTimeErrorCents,
  voltsPerOctaveAtBase,
} from '../dsp/converter/index.ts';
import { gaussianNoise } from './signals.ts';

/** Steps of a 1 V/oct oscillator: scale error (cents/oct), pitch at 0 V, an optional extra error, noise. */
function steps(
  volts: readonly number[],
  o: {
    scaleCents?: number;
    hzAt0V?: number;
    extra?: (hz: number) => number;
    noise?: number;
    sigma?: number;
    seed?: number;
  } = {},
): TrackingPoint[] {
  const s = 1 + (o.scaleCents ?? 0) / 1200;
  const nz = gaussianNoise(volts.length, o.noise ?? 0, o.seed ?? 1);
  return volts.map((v, i) => {
    const ideal = (o.hzAt0V ?? 32.70319566) * 2 ** (s * v);
    return {
      volts: v,
      hz: ideal * 2 ** (((o.extra?.(ideal) ?? 0) + nz[i]) / 1200),
      uncertaintyCents: o.sigma ?? 0.01,
    };
  });
}

describe('scalePairIntervalError', () => {
  it('measures the interval against 1200 cents per volt', () => {
    // Ellis 1885: interval = 1200·log2(f2/f1); docs/facts.md: set the scale from an interval.
    const r = scalePairIntervalError(130, 519.04, 1, 3);
    const interval = 1200 * Math.log2(519.04 / 130);
    expect(r.intervalCents).toBeCloseTo(interval, 12);
    expect(r.expectedCents).toBe(2400);
    expect(r.errorCents).toBeCloseTo(interval - 2400, 12);
    expect(r.errorCentsPerOctave).toBeCloseTo((interval - 2400) / 2, 12);
    expect(r.direction).toBe('widen');
    expect(r.withinTolerance).toBe(false);
    expect(r.gainChangePercent).toBeCloseTo((1 / r.octavesPerVolt - 1) * 100, 12);
    expect(r.text).toContain('turn the scale trimmer to widen the span');
    expect(r.text).toContain('narrow');
  });

  it('says narrow when the interval is wide, and leaves a good one alone', () => {
    expect(scalePairIntervalError(100, 401, 0, 2).direction).toBe('narrow');
    const good = scalePairIntervalError(100, 400, 0, 2);
    expect(good).toMatchObject({ direction: 'none', withinTolerance: true, errorCents: 0 });
    expect(good.text).toContain('leave the scale trimmer');
  });

  it('uses the tolerance over the interval', () => {
    const hz = 100 * 2 ** (2 + 0.8 / 1200); // 0.8 cents wide over two octaves
    expect(scalePairIntervalError(100, hz, 0, 2).withinTolerance).toBe(true);
    expect(scalePairIntervalError(100, hz, 0, 2, 0.5).direction).toBe('narrow');
  });

  it('rejects invalid input', () => {
    expect(() => scalePairIntervalError(0, 200, 0, 1)).toThrow(
      'hzLow must be a finite number greater than 0, got 0',
    );
    expect(() => scalePairIntervalError(100, 200, 1, 1)).toThrow(
      'voltsHigh must be a finite number greater than voltsLow (1), got 1',
    );
    expect(() => scalePairIntervalError(100, 200, 0, 1, -1)).toThrow(
      'toleranceCents must be a finite number at least 0, got -1',
    );
  });
});

describe('input network', () => {
  it('100 kΩ over about 4 kΩ gives about 25:1, fitting 0–5 V into the ~200 mV base window', () => {
    // Common practice, no source: an expo transistor's usable base window is roughly 350–550 mV (about
    // 200 mV), so a 0–5 V control range needs about 25:1, which 100 kΩ over about 4 kΩ gives.
    const window = 0.55 - 0.35;
    expect(5 / window).toBeCloseTo(25, 10);
    const attenuation = 1 / inputNetworkGain({ topology: 'divider', seriesOhms: 100e3, shuntOhms: 4e3 });
    expect(attenuation).toBe(26);
    expect(Math.abs(attenuation / 25 - 1)).toBeLessThan(0.05);
    expect(5 / attenuation).toBeLessThanOrEqual(window);
  });

  it('a 100 kΩ divider needs Rsh = 100 kΩ/(1/(VT ln2) − 1) for 1 V/oct at 25 °C', () => {
    // Derived from VT·ln2 (docs/facts.md): attenuation 56.15, so Rsh = 100 k/55.15 ≈ 1813 Ω;
    // nearest E96 1.82 kΩ, E24 1.8 kΩ (IEC 60063).
    const net = { topology: 'divider', seriesOhms: 100e3, shuntOhms: 1.8e3 } as const;
    const s = inputNetworkGain(net) * attenuationForOneVoltPerOctave(25);
    const changes = scaleCorrectionResistors(net, s);
    const shunt = changes.find((c) => c.part === 'shunt');
    const series = changes.find((c) => c.part === 'series');
    expect(shunt?.toOhms).toBeCloseTo(100e3 / (attenuationForOneVoltPerOctave(25) - 1), 6);
    expect(Math.round(shunt?.toOhms ?? 0)).toBe(1813);
    expect(shunt?.e96.ohms).toBe(1820);
    expect(shunt?.e24.ohms).toBe(1800);
    // Either corrected value makes the gain exactly 1/(VT ln2).
    expect(1.8e3 / ((series?.toOhms ?? 0) + 1.8e3)).toBeCloseTo(voltsPerOctaveAtBase(25), 12);
    // The E24 value 1.8 kΩ is the present one: it leaves the present error.
    expect(shunt?.e24.resultingScaleErrorCentsPerOctave).toBeCloseTo(1200 * (s - 1), 9);
  });

  it('an inverting summer scales Rin by s and Rf by 1/s', () => {
    const changes = scaleCorrectionResistors(
      { topology: 'inverting-summer', inputOhms: 100e3, feedbackOhms: 100e3 },
      0.99,
    );
    expect(changes.find((c) => c.part === 'input')?.toOhms).toBeCloseTo(99e3, 6);
    expect(changes.find((c) => c.part === 'feedback')?.toOhms).toBeCloseTo(100e3 / 0.99, 6);
  });

  it('rejects invalid networks', () => {
    expect(() => inputNetworkGain({ topology: 'divider', seriesOhms: 0, shuntOhms: 1 })).toThrow(
      'network.seriesOhms must be a finite number greater than 0, got 0',
    );
    expect(() =>
      scaleCorrectionResistors({ topology: 'inverting-summer', inputOhms: 1, feedbackOhms: 1 }, 0),
    ).toThrow('octavesPerVolt must be a finite number greater than 0, got 0');
  });
});

describe('adviseTrim', () => {
  const volts = [0, 1, 2, 3, 4, 5, 6, 7];

  it('says which way to turn the scale and by how much', () => {
    const pts = steps([1, 2, 3, 4], { scaleCents: -3.2 });
    const fit = fitTracking(pts);
    const a = adviseTrim({ fit });
    const scale = a.items[0];
    expect(scale).toMatchObject({ trimmer: 'scale', status: 'adjust', direction: 'widen' });
    expect(scale.errorCents).toBeCloseTo(-3.2, 9);
    const s = 1 - 3.2 / 1200;
    expect(scale.gainChangePercent).toBeCloseTo((1 / s - 1) * 100, 9);
    expect(scale.text).toContain('Turn the scale trimmer to widen the span: octaves are 3.2 cents narrow');
    expect(scale.text).toContain('from 1.000 V to 4.000 V reads 3600.0 cents');
    expect(scale.text).toContain('Leave the HF trimmer alone');
    // Order follows practice: scale, then HF, then offset (docs/facts.md, common practice).
    expect(a.items.map((i) => i.trimmer)).toEqual(['scale', 'hf', 'offset']);
    expect(a.items[1].status).toBe('unresolved');
    expect(a.next).toContain('measure 1.000 V and 4.000 V again');
    expect(a.caution).toBe(TRIM_CAUTION);
    expect(a.allWithinTolerance).toBe(false);
  });

  it('says narrow for wide octaves and gives resistor values for a network', () => {
    const fit = fitTracking(steps([0, 1, 2, 3], { scaleCents: 4 }));
    const a = adviseTrim({ fit, network: { topology: 'divider', seriesOhms: 100e3, shuntOhms: 1.8e3 } });
    expect(a.items[0]).toMatchObject({ direction: 'narrow' });
    expect(a.items[0].text).toContain('octaves are 4.0 cents wide');
    expect(a.items[0].resistors?.map((r) => r.part)).toEqual(['series', 'shunt']);
    // Issue 9: a value is named only when it leaves a smaller scale error than no change.
    const better = a.items[0].resistors!.filter(
      (r) => Math.abs(r.e96.resultingScaleErrorCentsPerOctave) < Math.abs(a.items[0].errorCents!),
    );
    if (better.length > 0) expect(a.items[0].text).toContain('nearest E96');
    else
      expect(a.items[0].text).toContain(
        'No E96 resistor value would leave a smaller scale error than no change',
      );
  });

  it('says so instead of inventing work when everything is within tolerance', () => {
    const pts = steps(volts, { scaleCents: 0.05, noise: 0.01, seed: 2 });
    const a = adviseTrim({ fit: fitTracking(pts), bends: analyzeBends(pts) });
    expect(a.items.map((i) => i.status)).toEqual([
      'within-tolerance',
      'within-tolerance',
      'within-tolerance',
    ]);
    expect(a.items.every((i) => i.direction === 'none')).toBe(true);
    expect(a.allWithinTolerance).toBe(true);
    expect(a.items[0].text).toContain('Leave the scale trimmer');
    // docs/facts.md: keep a record per unit (serial, date, room temperature, warm-up time, meter).
    expect(a.next).toContain('record the readings');
  });

  it('advises HF after the scale, from the droop at the top', () => {
    // Reset time 4.55 µs (docs/facts.md worked figure), top step 4186 Hz.
    const pts = steps(volts, {
      scaleCents: 0,
      noise: 0.01,
      seed: 3,
      extra: (hz) => resetTimeErrorCents(hz, 4.55e-6),
    });
    const bends = analyzeBends(pts);
    const a = adviseTrim({ fit: fitTracking(pts), bends, toleranceCents: 1 });
    const hf = a.items.find((i) => i.trimmer === 'hf');
    expect(hf).toMatchObject({ status: 'adjust', direction: 'more-compensation' });
    expect(hf?.text).toContain('Turn the HF trimmer to add compensation');
    expect(hf?.text).toContain('flat of the line through the middle steps');
    expect(hf?.text).toContain('reset time of about 4.5 µs');
    expect(hf?.text).toContain('2–5 kHz');
  });

  it('asks for a step near 2–5 kHz when the range stops short of it', () => {
    const pts = steps([0, 1, 2, 3, 4, 5]); // top 1046.5 Hz
    const a = adviseTrim({ fit: fitTracking(pts), bends: analyzeBends(pts) });
    expect(a.items[1]).toMatchObject({ trimmer: 'hf', status: 'unresolved' });
    expect(a.next).toContain('2–5 kHz');
  });

  it('sets the offset last, in cents and millivolts', () => {
    // 3 cents sharp of C2 at 1 V: lower by 3 cents = 2.5 mV at 1 V/oct (1 mV = 1.2 cents, docs/facts.md) and
    // 3/1200·VT·ln2 at the base (derived).
    const c2 = 65.40639133;
    const pts = steps([1, 2, 3, 4], { hzAt0V: (c2 / 2) * 2 ** (3 / 1200) });
    const a = adviseTrim({ fit: fitTracking(pts), offsetTarget: { volts: 1, hz: c2 } });
    const off = a.items.find((i) => i.trimmer === 'offset');
    expect(off).toMatchObject({ status: 'adjust', direction: 'lower' });
    expect(off?.errorCents).toBeCloseTo(3, 9);
    expect(off?.millivoltsAtInput).toBeCloseTo(-2.5, 9);
    expect(off?.millivoltsAtBase).toBeCloseTo((-3 / 1200) * voltsPerOctaveAtBase(25) * 1000, 12);
    expect(off?.text).toContain('3.0 cents sharp of C2 (65.41 Hz)');
    expect(off?.text).toContain('lower the pitch');
  });

  it('defaults the offset target to the nearest note at the lowest voltage', () => {
    // A4 = 440 Hz (ISO 16:1975): 2 cents flat of A1 = 55 Hz at 0 V.
    const pts = steps([0, 1, 2], { hzAt0V: 55 * 2 ** (-2 / 1200) });
    const off = adviseTrim({ fit: fitTracking(pts) }).items[2];
    expect(off).toMatchObject({ trimmer: 'offset', direction: 'raise' });
    expect(off.text).toContain('flat of A1');
  });

  it('reports an unresolved scale instead of trimming noise', () => {
    const pts = steps([1, 2], { scaleCents: -1.5 }).map((p) => ({ ...p, uncertaintyCents: 3 }));
    const a = adviseTrim({ fit: fitTracking(pts) });
    expect(a.items[0]).toMatchObject({ trimmer: 'scale', status: 'unresolved' });
    expect(a.next).toContain('longer readings');
  });

  it('notes a low-end bend without a trimmer', () => {
    const pts = steps(volts, { noise: 0.01, extra: (hz) => (hz < 40 ? 4 : 0) });
    const a = adviseTrim({ fit: fitTracking(pts), bends: analyzeBends(pts) });
    const note = a.items.find((i) => i.trimmer === 'none');
    expect(note).toMatchObject({ status: 'note' });
    expect(note?.text).toContain('The bottom step at 32.78 Hz (0.000 V) is 4.0 cents sharp');
  });

  it('asks for measurements when there is no fit', () => {
    const a = adviseTrim({ fit: { kind: 'none', reason: 'too-few-points' } });
    expect(a.items).toEqual([]);
    expect(a.next).toContain('at least two steps');
  });

  it('carries the usual caution', () => {
    expect(TRIM_CAUTION).toContain('documentation');
    expect(TRIM_CAUTION).toContain('mains');
    expect(TRIM_CAUTION).toContain('power rail');
  });

  it('rejects invalid options', () => {
    const fit = fitTracking(steps([0, 1, 2]));
    expect(() => adviseTrim({ fit, toleranceCents: -1 })).toThrow(
      'toleranceCents must be a finite number at least 0, got -1',
    );
    expect(() => adviseTrim({ fit, offsetTarget: { volts: 0, hz: 0 } })).toThrow(
      'offsetTarget.hz must be a finite number greater than 0, got 0',
    );
    expect(() => adviseTrim({ fit, tempC: -300 })).toThrow(RangeError);
  });
});
