/**
 * The Span run's Setup: the interface clock correction (typed, or measured from a reference tone of
 * known frequency now playing), the fit range and the input network for resistor values in the scale
 * advice. A compact disclosure; what it holds is kept between sessions (lib/setup.ts).
 */
import { useState } from 'react';
import { clockPpmFromReference, ppmToCents } from '../../../dsp/io/index.ts';
import type { PitchReading } from '../../../dsp/pitch/index.ts';
import type { CaptureSignal } from '../hooks/useCaptureSignal.ts';
import { numberOrNull } from '../lib/fields.ts';
import { RESISTOR_NAMES, setupSummary, type SetupForm } from '../lib/setup.ts';
import { NumberField } from './NumberField.tsx';

export interface SetupPanelProps {
  form: SetupForm;
  onForm(form: SetupForm): void;
  /** Fields that could not be used, one line each (from setupOptions). */
  problems: readonly string[];
  /** The live reading as read (no clock correction) and whether it has settled. */
  reading: PitchReading | null;
  settled: boolean;
  /** The optional signal on each capture. */
  captureSignal?: CaptureSignal;
  onCaptureSignal?(s: CaptureSignal): void;
}

export function SetupPanel(p: SetupPanelProps) {
  const [refHz, setRefHz] = useState('');
  const [refMsg, setRefMsg] = useState<{ kind: 'info' | 'warn'; text: string } | null>(null);
  const set = (patch: Partial<SetupForm>) => p.onForm({ ...p.form, ...patch });
  const names = p.form.topology === 'none' ? null : RESISTOR_NAMES[p.form.topology];

  const measure = () => {
    const trueHz = numberOrNull(refHz, { min: 0.001 });
    if (trueHz === null) {
      setRefMsg({ kind: 'warn', text: 'Type the reference tone’s true frequency in Hz first.' });
      return;
    }
    const r = p.reading;
    if (!r || r.kind !== 'ok' || !p.settled) {
      setRefMsg({
        kind: 'warn',
        text: 'No settled reading yet: play the reference tone into the input and wait for “Settled”.',
      });
      return;
    }
    const c = clockPpmFromReference(r.hz, trueHz);
    if (c.kind === 'none') {
      setRefMsg({
        kind: 'warn',
        text: `The input reads ${r.hz.toFixed(3)} Hz, ${Math.round(c.ppm)} ppm from ${trueHz} Hz: more than any interface clock is off. Check the frequency typed, the tone and the sample-rate setting.`,
      });
      return;
    }
    set({ clockPpm: c.ppm.toFixed(3) });
    setRefMsg({
      kind: 'info',
      text: `Read ${r.hz.toFixed(4)} Hz for ${trueHz} Hz: the clock runs ${c.ppm >= 0 ? 'fast' : 'slow'} by ${Math.abs(c.ppm).toFixed(3)} ppm (${Math.abs(ppmToCents(c.ppm)).toFixed(4)} ¢). The correction is only as good as the reference.`,
    });
  };

  return (
    <details className="setup" data-testid="setup">
      <summary>
        Setup <span className="dim small">{setupSummary(p.form)}</span>
      </summary>
      <div className="setup-body">
        <fieldset>
          <legend>Interface clock</legend>
          <div className="row">
            <NumberField
              label="Correction, ppm (+ = clock fast)"
              value={p.form.clockPpm}
              onChange={(t) => set({ clockPpm: t })}
              rule={{ min: -1000, max: 1000, unit: 'ppm' }}
              placeholder="0"
              testId="setup-clock-ppm"
            />
            <NumberField
              label="Reference tone now playing, true Hz"
              value={refHz}
              onChange={setRefHz}
              rule={{ min: 0.001, max: 100_000, unit: 'Hz' }}
              placeholder="1000"
              testId="setup-ref-hz"
            />
            <button onClick={measure} data-testid="setup-measure-clock">
              Measure from the tone
            </button>
          </div>
          {refMsg && <p className={`message ${refMsg.kind} small`}>{refMsg.text}</p>}
          <p className="dim small">
            Corrects every frequency shown and stored; intervals, and so the scale, do not depend on it.
          </p>
        </fieldset>
        <fieldset>
          <legend>Fit range (optional)</legend>
          <div className="row">
            <NumberField
              label="From, V"
              value={p.form.fitFromVolts}
              onChange={(t) => set({ fitFromVolts: t })}
              rule={{ min: -20, max: 20, unit: 'V' }}
              placeholder="lowest"
              testId="setup-fit-from"
            />
            <NumberField
              label="To, V"
              value={p.form.fitToVolts}
              onChange={(t) => set({ fitToVolts: t })}
              rule={{ min: -20, max: 20, unit: 'V' }}
              placeholder="highest"
              testId="setup-fit-to"
            />
          </div>
        </fieldset>
        <fieldset>
          <legend>Scale trimmer pivot (optional)</legend>
          <div className="row">
            <NumberField
              label="Pivot, V"
              value={p.form.scalePivotVolts}
              onChange={(t) => set({ scalePivotVolts: t })}
              rule={{ min: -12, max: 12, unit: 'V' }}
              placeholder="unknown"
              testId="setup-pivot"
            />
          </div>
          <p className="dim small">
            The voltage whose pitch holds still while the scale trimmer turns. The Scale pair measures it.
            With it the offset is set on that step, which later scale trims leave in place; without it, on the
            middle step.
          </p>
        </fieldset>
        <fieldset>
          <legend>Input network</legend>
          <div className="row">
            <label className="field">
              <span>Topology</span>
              <select
                value={p.form.topology}
                onChange={(e) => set({ topology: e.target.value as SetupForm['topology'] })}
                data-testid="setup-topology"
              >
                <option value="none">Not set</option>
                <option value="divider">Divider (series, shunt)</option>
                <option value="inverting-summer">Inverting summer (input, feedback)</option>
              </select>
            </label>
            {names && (
              <>
                <label className="field">
                  <span>{names[0]}</span>
                  <input
                    className="num setup-num"
                    placeholder="100k"
                    value={p.form.firstOhms}
                    onChange={(e) => set({ firstOhms: e.target.value })}
                    data-testid="setup-ohms-1"
                  />
                </label>
                <label className="field">
                  <span>{names[1]}</span>
                  <input
                    className="num setup-num"
                    placeholder={p.form.topology === 'divider' ? '1.8k' : '100k'}
                    value={p.form.secondOhms}
                    onChange={(e) => set({ secondOhms: e.target.value })}
                    data-testid="setup-ohms-2"
                  />
                </label>
              </>
            )}
          </div>
          <p className="dim small">
            Ohms as 100k, 1.8k (or 1,8k), 4k02 or 470. Change resistors only with the unit unpowered.
          </p>
        </fieldset>
        {p.onCaptureSignal && (
          <fieldset>
            <legend>At each capture</legend>
            <label className="field">
              <span>Signal</span>
              <select
                value={p.captureSignal ?? 'off'}
                onChange={(e) => p.onCaptureSignal?.(e.target.value as CaptureSignal)}
                data-testid="setup-capture-signal"
              >
                <option value="off">Nothing</option>
                <option value="flash">Flash the screen</option>
                <option value="sound">A short beep</option>
                <option value="both">Flash and beep</option>
              </select>
            </label>
          </fieldset>
        )}
        {p.problems.length > 0 && (
          <ul className="message warn small setup-problems" data-testid="setup-problems">
            {p.problems.map((t) => (
              <li key={t}>{t}</li>
            ))}
          </ul>
        )}
        <p className="dim small">Applies to the run shown and to the next WAV opened.</p>
      </div>
    </details>
  );
}
