/**
 * The uncertainty budget in the exports of a run (renderer/src/ui/results/report.ts, lib/export.ts): per
 * step, for the scale error and for the 0 V pitch, the combined standard uncertainty, the coverage factor
 * and the expanded uncertainty with the named contributions, at two significant digits. The CSV is read
 * back with papaparse (a general-purpose CSV parser from npm). The checks are those of the GUM (JCGM
 * 100:2008): u_c is the root-sum-square of uncorrelated contributions (§5.1.2), U = k·u_c (§6.2.1), and
 * u_c and U are quoted to at most two significant digits (§7.2.6).
 */
import { describe, expect, it } from 'vitest';
import Papa from 'papaparse';
import { calibrate } from '../dsp/calibration/index.ts';
import { runAnalysisOf } from '../renderer/src/lib/analysis.ts';
import { CSV_STEP_COLUMNS } from '../renderer/src/lib/export.ts';
import { formatUncertainty } from '../dsp/format/index.ts';
import { budgetsOf } from '../renderer/src/ui/results/budget.ts';
import {
  DEFAULT_TOLERANCE_CENTS,
  SOFTWARE_VERSION,
  reportToCsv,
  reportToJson,
  resultFromAnalysis,
  type RunReport,
} from '../renderer/src/ui/results/index.ts';

// Invented demo: unit OL3-0417 of the Ostlund Lane batch, a scale about 4.2 cents per octave wide, read on
// a 0–4 V plan with the 2 V step read on the meter.
const OPV = 1 + 4.2 / 1200;
const STEPS = [0, 1, 2, 3, 4].map((v, i) => ({
  index: i,
  volts: v,
  measuredVolts: v === 2 ? 2.001 : null,
  rawHz: 32.66 * Math.pow(2, OPV * v),
  uncertaintyCents: 0.004 + 0.001 * i,
  components: { estimatorCents: 0.003, repeatabilityCents: 0.002 + 0.001 * i, settlingCents: 0.001, dof: 9 },
}));

function report(): RunReport {
  const a = runAnalysisOf(calibrate(STEPS));
  return {
    result: resultFromAnalysis(a),
    unitName: 'OL3-0417',
    serial: 'OLW-0417',
    label: 'before',
    takenAt: '2026-11-30T09:15:00.000Z',
    roomTempC: 22.5,
    meterUsed: 'bench DMM',
    warmUpMinutes: 20,
    notes: null,
    planVolts: STEPS.map((s) => s.volts),
    toleranceCents: DEFAULT_TOLERANCE_CENTS,
    saved: true,
    softwareVersion: SOFTWARE_VERSION,
  };
}

function parse(text: string): string[][] {
  return Papa.parse<string[]>(text.slice(1), { delimiter: ',', newline: '\r\n' }).data;
}

const twoSig = (v: number) => Number(v.toPrecision(2));

describe('the budget in the exports', () => {
  const r = report();
  const budgets = budgetsOf(r.result.source);

  it('has a budget for the scale, the 0 V pitch and every step, each u_c the RSS of its terms', () => {
    expect(budgets.map((b) => b.key)).toEqual([
      'scale',
      'pitch-at-0v',
      'step-1',
      'step-2',
      'step-3',
      'step-4',
      'step-5',
    ]);
    for (const b of budgets) {
      // GUM §5.1.2: uncorrelated contributions combine as a root-sum-square.
      const rss = Math.sqrt(b.terms.reduce((s, t) => s + t.standard ** 2, 0));
      expect(b.combined, b.key).toBeCloseTo(rss, 9);
      // GUM §6.2.1: U = k·u_c, with k about 2 for about 95 % (GUM §G.3, Table G.2: k ≥ 2).
      expect(b.expanded, b.key).toBeCloseTo(b.coverageFactor * b.combined, 9);
      expect(b.coverageFactor).toBeGreaterThanOrEqual(2);
      expect(b.terms.length).toBeGreaterThan(0);
    }
    // The step read on the meter carries the meter's resolution; the others the source's accuracy.
    const step3 = budgets.find((b) => b.key === 'step-3')!;
    expect(step3.terms.map((t) => t.source)).toContain('meter-resolution');
    expect(step3.terms.map((t) => t.label)).toContain('reference voltage');
  });

  it('CSV: each step row carries u_c, k, U and its named contributions to two significant digits', () => {
    const rows = parse(reportToCsv(r));
    const at = rows.findIndex((x) => x[0] === 'step');
    expect(rows[at]).toEqual([...CSV_STEP_COLUMNS]);
    const col = (name: string) => CSV_STEP_COLUMNS.indexOf(name as (typeof CSV_STEP_COLUMNS)[number]);
    const table = rows.slice(at + 1).filter((x) => x.length > 3);
    expect(table).toHaveLength(5);
    for (const row of table) {
      const b = budgets.find((x) => x.key === `step-${row[0]}`)!;
      expect(Number(row[col('budget_combined_u_cents')])).toBe(twoSig(b.combined));
      expect(Number(row[col('budget_coverage_k')])).toBe(Number(b.coverageFactor.toFixed(2)));
      expect(Number(row[col('budget_expanded_u_cents')])).toBe(twoSig(b.expanded));
      const est = b.terms.find((t) => t.source === 'estimator')!;
      expect(Number(row[col('budget_u_estimator_cents')])).toBe(twoSig(est.standard));
      // A 0 V step set by the source has no reference-voltage term (0.1 % of 0 V): its cell is empty.
      const ref = b.terms.find((t) => t.source === 'reference-voltage');
      if (ref) expect(Number(row[col('budget_u_reference_voltage_cents')])).toBe(twoSig(ref.standard));
      else expect(row[col('budget_u_reference_voltage_cents')]).toBe('');
      // At most two significant digits (GUM §7.2.6).
      for (const name of ['budget_combined_u_cents', 'budget_expanded_u_cents']) {
        const digits = row[col(name)].replace(/^0\.0*|\./g, '');
        expect(digits.length, `${name} = ${row[col(name)]}`).toBeLessThanOrEqual(2);
      }
    }
  });

  it('CSV: the scale error and the 0 V pitch have their budget in the header lines', () => {
    const rows = parse(reportToCsv(r));
    const head = new Map(rows.filter((x) => x.length === 2).map((x) => [x[0], x[1]]));
    const scale = budgets.find((b) => b.key === 'scale')!;
    expect(Number(head.get('scale_error_combined_u_cents_per_octave'))).toBe(twoSig(scale.combined));
    expect(Number(head.get('scale_error_expanded_u_cents_per_octave'))).toBe(twoSig(scale.expanded));
    expect(Number(head.get('scale_error_coverage_k'))).toBe(Number(scale.coverageFactor.toFixed(2)));
    for (const t of scale.terms)
      expect(head.has(`scale_error_u_${t.source.replace(/-/g, '_')}_cents_per_octave`), t.source).toBe(true);
    const p0 = budgets.find((b) => b.key === 'pitch-at-0v')!;
    expect(Number(head.get('pitch_at_0v_expanded_u_cents'))).toBe(twoSig(p0.expanded));
  });

  it('the live run, not yet saved, exports the same budget columns', () => {
    const rows = parse(reportToCsv({ ...report(), saved: false, label: null }));
    const at = rows.findIndex((x) => x[0] === 'step');
    expect(rows[at]).toEqual([...CSV_STEP_COLUMNS]);
    const first = rows[at + 1];
    expect(Number(first[CSV_STEP_COLUMNS.indexOf('budget_coverage_k')])).toBeGreaterThanOrEqual(2);
  });

  it('JSON: the budgets with named contributions, in the one result shape', () => {
    const j = JSON.parse(reportToJson(r));
    // The export carries the result as saved (dsp/calibration/result.ts), so the same budgets come out of it.
    expect(budgetsOf(j.result).map((b) => b.quantity)).toEqual(budgets.map((b) => b.quantity));
    expect(budgetsOf(j.result)).toEqual(budgets);
    const scale = j.result.fit.scaleBudget;
    expect(scale.terms[0]).toMatchObject({ source: expect.any(String), type: expect.any(String) });
    // U = k·u_c (JCGM 100:2008, 6.2.1).
    expect(scale.expandedCents).toBeCloseTo(scale.coverageFactor * scale.combinedCents, 9);
  });

  it('formatUncertainty shows two significant digits (GUM §7.2.6)', () => {
    expect(formatUncertainty(0.0123)).toBe('0.012');
    expect(formatUncertainty(1.5)).toBe('1.5');
    expect(formatUncertainty(0.09996)).toBe('0.10');
    expect(formatUncertainty(23.4)).toBe('23');
    expect(formatUncertainty(null)).toBe('—');
    expect(formatUncertainty(Number.NaN)).toBe('—');
  });
});
