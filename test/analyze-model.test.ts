// `spanmeter analyze` with the calibration model's options (issue 9): meter, measured volts, tolerance, and the
// plausibility gates, run as a user would run them. Demo data: an invented Ostlund Lane workshop unit.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { rmSync } from 'node:fs';
import { join } from 'node:path';
import { planSchedule, renderOscillator } from '../dsp/sim/index.ts';
import { cliInProcess } from './cli-run.ts';
import { tempDir, writeWavFile } from './helpers/wav.ts';

let dir = '';
let file = '';

beforeAll(() => {
  dir = tempDir('model');
  // 0…5 V from 32.7 Hz, scale +1.5 cents per octave, a 2 µs reset time.
  const rec = renderOscillator(
    { hz0: 32.7, scaleOctPerVolt: 1 + 1.5 / 1200, resetSeconds: 2e-6, snrDb: 60, seed: 3 },
    planSchedule([0, 1, 2, 3, 4, 5], { holdSeconds: 2, glideSeconds: 0.1 }),
  );
  file = writeWavFile(join(dir, 'ol-unit.wav'), [rec.samples], rec.sampleRateHz, '16');
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('analyze with the calibration model', () => {
  it('puts the model, the budgets and the tolerance in --json, and takes meter readings', async () => {
    const r = await cliInProcess(
      'analyze',
      file,
      '--points',
      '0,1,2,3,4,5',
      '--measured',
      '0,1,2,3,4,5',
      '--meter',
      '5.5',
      '--tolerance',
      '0.5',
      '--json',
    );
    expect(r.code).toBe(0);
    const j = JSON.parse(r.stdout);
    expect(j.fit.model.criterion).toBe('AICc');
    expect(Math.abs(j.fit.scaleErrorCentsPerOctave - 1.5)).toBeLessThan(0.1);
    expect(j.fit.straightLine.scaleErrorCentsPerOctave).toBeLessThan(1.3); // the droop tilts the straight line
    expect(j.fit.scaleBudget.coverageFactor).toBeGreaterThanOrEqual(2);
    expect(j.fit.tolerance.toleranceCents).toBe(0.5);
    for (const s of j.steps) {
      expect(s.flags).toEqual([]);
      expect(s.budget.expandedCents).toBeGreaterThan(0);
    }
  });
  it('flags a step whose voltage was given wrong, with the voltage it played', async () => {
    const r = await cliInProcess('analyze', file, '--points', '0,1,2,3.04,4,5', '--json');
    expect(r.code).toBe(0);
    const j = JSON.parse(r.stdout);
    expect(j.steps[3].flags).toEqual(['suspect-voltage']);
    expect(j.steps[3].likelyVolts).toBeCloseTo(3, 2);
    expect(j.advice[0].text).toContain('re-check that voltage');
  });
  it('refuses points in the wrong order with the likely cause', async () => {
    const r = await cliInProcess('analyze', file, '--points', '5,4,3,2,1,0');
    expect(r.code).toBe(1);
    expect(r.stdout).toBe('');
    expect(r.stderr).toContain('wrong order');
  });
  it('refuses half-volt steps given as whole volts', async () => {
    const r = await cliInProcess('analyze', file, '--points', '0,2,4,6,8,10');
    expect(r.code).toBe(1);
    // 1 V steps listed as 2 V steps: half an octave per volt given, as when half-volt steps are listed as whole volts.
    expect(r.stderr).toMatch(/0\.50\d octaves per volt/);
    expect(r.stderr).toContain('half-volt steps given as whole volts');
  });
  it('names a bad option in one line', async () => {
    expect(
      (await cliInProcess('analyze', file, '--points', '0,1,2,3,4,5', '--measured', '0,1')).stderr,
    ).toContain('--measured must give one reading per --points voltage (6), got 2');
    expect((await cliInProcess('analyze', file, '--tolerance', '0.5')).stderr).toContain(
      '--tolerance applies only to a multi-step run',
    );
    expect((await cliInProcess('analyze', file, '--points', '0,1,2,3,4,5', '--meter', 'x')).stderr).toContain(
      '--meter must be',
    );
  });
});
