// The Span run's Setup: resistor values as typed, the analysis options it builds, and what survives
// in localStorage.
import { describe, expect, it } from 'vitest';
import { parseOhms } from '../dsp/converter/index.ts';
import {
  DEFAULT_SETUP,
  loadSetup,
  parseStoredSetup,
  saveSetup,
  setupOptions,
  SETUP_STORAGE_KEY,
  type SetupStorage,
} from '../renderer/src/lib/setup.ts';
import { calibrate } from '../dsp/calibration/index.ts';
import { runAnalysisOf } from '../renderer/src/lib/analysis.ts';
import { pairPivotVolts } from '../renderer/src/ui/ScalePairPanel.tsx';

describe('parseOhms', () => {
  // Multiplier suffixes k = 10³, M = 10⁶ (SI prefixes); the letter as the decimal point (4k02, 2M2, 4R7)
  // is the resistance code of IEC 60062 (from memory of the standard).
  it.each<[string, number]>([
    ['100k', 100_000],
    ['1.8k', 1800],
    ['4k02', 4020],
    ['4K7', 4700],
    ['2M2', 2_200_000],
    ['2.2M', 2_200_000],
    ['4R7', 4.7],
    ['470R', 470],
    ['470', 470],
    [' 10 kΩ ', 10_000],
    ['1800 ohm', 1800],
  ])('%j is %d Ω', (text, ohms) => {
    expect(parseOhms(text)).toEqual({ kind: 'ok', ohms });
  });

  it.each(['', 'abc', '1.8 kk', '-100k', '0', '0k', '1m', '4k0.2', '1e3', 'k'])(
    'garbage %j is a clear message, not a throw',
    (text) => {
      const r = parseOhms(text);
      expect(r.kind).toBe('error');
      if (r.kind === 'error') expect(r.message).toMatch(/^'.*' is not a resistance: /);
    },
  );

  it('the message names the value and the accepted forms', () => {
    expect(parseOhms('abc')).toEqual({
      kind: 'error',
      message: "'abc' is not a resistance: type ohms like 470, 100k, 1.8k, 4k02 or 2.2M",
    });
    expect(parseOhms('2000M')).toEqual({
      kind: 'error',
      message: "'2000M' is not a resistance: it must be at most 1 GΩ",
    });
  });
});

describe('setupOptions', () => {
  it('an empty Setup changes nothing', () => {
    expect(setupOptions(DEFAULT_SETUP)).toEqual({ clockPpm: 0, problems: [] });
  });

  it('every field in use', () => {
    expect(
      setupOptions({
        clockPpm: '−12.5',
        fitFromVolts: '1',
        fitToVolts: '5',
        topology: 'divider',
        firstOhms: '100k',
        secondOhms: '1.8k',
        scalePivotVolts: '2,5',
      }),
    ).toEqual({
      clockPpm: -12.5,
      fitFromVolts: 1,
      fitToVolts: 5,
      network: { topology: 'divider', seriesOhms: 100_000, shuntOhms: 1800 },
      scalePivotVolts: 2.5,
      problems: [],
    });
    expect(
      setupOptions({ ...DEFAULT_SETUP, topology: 'inverting-summer', firstOhms: '100k', secondOhms: '4k02' })
        .network,
    ).toEqual({ topology: 'inverting-summer', inputOhms: 100_000, feedbackOhms: 4020 });
  });

  it('fields that cannot be used are left out and named', () => {
    const o = setupOptions({
      clockPpm: '2000',
      fitFromVolts: '5',
      fitToVolts: '1',
      topology: 'divider',
      firstOhms: '100k',
      secondOhms: 'lots',
      scalePivotVolts: 'middle',
    });
    expect(o.clockPpm).toBe(0);
    expect(o.network).toBeUndefined();
    expect(o.fitFromVolts).toBeUndefined();
    expect(o.problems).toEqual([
      "Clock correction: '2000' is not a number of ppm (−1000 to 1000).",
      'Fit range: from 5 V is above to 1 V; every step is fitted.',
      "Scale pivot: 'middle' is not a voltage (−12 to 12 V).",
      "Shunt Rsh: 'lots' is not a resistance: type ohms like 470, 100k, 1.8k, 4k02 or 2.2M.",
    ]);
  });

  it('the Scale pair’s pivot: the step that held still while the trimmer turned', () => {
    // A scale change δe moves the step at V by δe·(V − p) cents (derived; scalePivotVolts, dsp/advice).
    // Narrowing by 1.3 cents per octave about 2 V: 0 V rises 2.6 cents and 4 V falls 2.6.
    const up = (hz: number, c: number) => hz * Math.pow(2, c / 1200);
    const first = { low: 65.406, high: 1046.5 };
    expect(pairPivotVolts(first, { low: up(65.406, 2.6), high: up(1046.5, -2.6) }, 0, 4)).toBeCloseTo(2, 9);
    // Moves too alike to tell (under 0.5 cent apart): no pivot yet.
    expect(pairPivotVolts(first, { low: up(65.406, 0.1), high: up(1046.5, 0.2) }, 0, 4)).toBeNull();
  });
});

describe('the Setup in localStorage', () => {
  function fakeStorage(): SetupStorage & { data: Map<string, string> } {
    const data = new Map<string, string>();
    return { data, getItem: (k) => data.get(k) ?? null, setItem: (k, v) => void data.set(k, v) };
  }

  it('round trip', () => {
    const s = fakeStorage();
    const form = { ...DEFAULT_SETUP, clockPpm: '37.5', topology: 'divider' as const, firstOhms: '100k' };
    saveSetup(s, form);
    expect(loadSetup(s)).toEqual(form);
  });

  it.each<[string, string | null]>([
    ['nothing stored', null],
    ['not JSON', '{oops'],
    ['an array', '[1,2]'],
    ['a number', '42'],
  ])('%s: the default Setup', (_name, stored) => {
    const s = fakeStorage();
    if (stored !== null) s.data.set(SETUP_STORAGE_KEY, stored);
    expect(loadSetup(s)).toEqual(DEFAULT_SETUP);
  });

  it('garbage is ignored field by field', () => {
    expect(
      parseStoredSetup(
        JSON.stringify({ clockPpm: '12', fitFromVolts: 3, topology: 'bogus', firstOhms: 'x'.repeat(500) }),
      ),
    ).toEqual({ ...DEFAULT_SETUP, clockPpm: '12' });
  });

  it('storage that throws is survived', () => {
    const broken: SetupStorage = {
      getItem: () => {
        throw new Error('denied');
      },
      setItem: () => {
        throw new Error('quota');
      },
    };
    expect(loadSetup(broken)).toEqual(DEFAULT_SETUP);
    expect(() => saveSetup(broken, DEFAULT_SETUP)).not.toThrow();
  });
});

describe('the calibration pipeline with a Setup', () => {
  // 55·2^V Hz for V = 0…4, readings 0.01 cent: an exact 1 V/oct line (the 1 V/oct definition).
  const steps = [0, 1, 2, 3, 4].map((v, i) => ({
    index: i,
    volts: v,
    measuredVolts: null,
    rawHz: 55 * Math.pow(2, v * (1 + 4 / 1200)),
    uncertaintyCents: 0.01,
  }));

  it('the clock correction scales every Hz; the fit range and the network reach the advice', () => {
    const plain = runAnalysisOf(calibrate(steps));
    const set = runAnalysisOf(
      calibrate(steps, {
        clockPpm: 100,
        fitFromVolts: 1,
        fitToVolts: 3,
        network: { topology: 'divider', seriesOhms: 100e3, shuntOhms: 1.8e3 },
      }),
    );
    set.table!.rows.forEach((r, i) => expect(r.hz / plain.table!.rows[i].hz).toBeCloseTo(1.0001, 12));
    expect(set.fit).toMatchObject({ kind: 'ok', fromVolts: 1, toVolts: 3 });
    expect(set.advice.items[0].resistors?.map((r) => r.part)).toEqual(['series', 'shunt']);
    expect(plain.advice.items[0].resistors).toBeNull();
  });
});
