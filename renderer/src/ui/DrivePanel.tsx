/**
 * The drive: which output sets the reference voltages (a DC-coupled interface output, a MIDI-to-CV
 * converter, or the simulated bench's output), its safety settings, the caution before first use, and
 * the guided calibration with the multimeter at the oscillator's input jack. `HandsOffPanel` holds
 * the hands-off controls of the Span run (one sweep or a trim loop, with its pass history), the Scale
 * pair and the Hold.
 */
import { useEffect, useState } from 'react';
import { MAX_DRIVE_VOLTS_CEILING, meterUncertainty, MIDDLE_C_NOTE } from '../../../dsp/drive/index.ts';
import { formatCents, formatNumber, NO_VALUE } from '../../../dsp/format/index.ts';
import { midiToName } from '../../../dsp/math/index.ts';
import type { DriveApi } from '../drive/use-drive.ts';
import { parseNumberField, type NumberRule } from '../lib/fields.ts';
import { DevicePicker } from './DevicePicker.tsx';
import { NumberField } from './NumberField.tsx';
import type { DriveKind } from '../drive/drive.ts';

/** Volts with the unit: 0.1 mV by default (a meter's last digit), the shared formatter (dsp/format). */
function fmtV(v: number, digits = 4): string {
  return Number.isFinite(v) ? `${formatNumber(v, digits)} V` : NO_VALUE;
}

/**
 * A drive setting typed as a number, by the one field rule (lib/fields.ts): the text stays as typed,
 * an unusable value is marked with the reason and not used, a usable one is passed on at once.
 */
function SettingField(p: {
  label: string;
  value: number;
  rule: NumberRule;
  onValue(v: number): void;
  testId?: string;
  disabled?: boolean;
}) {
  const [text, setText] = useState<string | null>(null);
  const rule: NumberRule = { optional: false, ...p.rule };
  return (
    <NumberField
      label={p.label}
      value={text ?? String(p.value)}
      rule={rule}
      compact
      disabled={p.disabled}
      testId={p.testId}
      onChange={(t) => {
        setText(t);
        const r = parseNumberField(t, rule);
        if (r.kind === 'ok') p.onValue(r.value);
      }}
      onCommit={() => {
        if (text !== null && parseNumberField(text, rule).kind === 'ok') setText(null);
      }}
    />
  );
}

/** The caution shown before a real output is first used. */
export function DriveCaution(props: { onAccept(): void }) {
  const [checked, setChecked] = useState(false);
  return (
    <div
      className="banner drive-caution"
      data-testid="drive-caution"
      role="alertdialog"
      aria-label="Before the drive is used"
    >
      <strong>Before Spanmeter drives your oscillator</strong>
      <ul>
        <li>
          Use a <b>DC-coupled</b> output (or a MIDI-to-CV converter). Most interface outputs are AC-coupled
          and cannot hold a voltage; check your interface’s manual.
        </li>
        <li>
          Patch the output <b>only to the oscillator’s 1 V/oct input</b>. Never connect it to a power rail
          (Eurorack ±12 V, +5 V) or to another output.
        </li>
        <li>
          Set the maximum voltage below what your oscillator’s input accepts. The drive starts at 0 V, ramps
          between levels and returns to 0 V when it stops.
        </li>
        <li>
          Follow the manuals of your interface, converter and module; when in doubt, ask someone qualified.
        </li>
      </ul>
      <label className="check">
        <input
          type="checkbox"
          checked={checked}
          onChange={(e) => setChecked(e.target.checked)}
          data-testid="drive-caution-check"
        />
        The output is DC-coupled and patched only to the 1 V/oct input.
      </label>
      <button disabled={!checked} onClick={props.onAccept} data-testid="drive-caution-accept">
        Enable the drive
      </button>
    </div>
  );
}

/** A meter reading: any number in volts (one above the maximum stops the calibration, in the hook). */
const READING_RULE: NumberRule = { unit: 'V' };

function Calibration(props: { api: DriveApi }) {
  const { api } = props;
  const [text, setText] = useState('');
  const s = api.session;
  const cal = api.calibration;
  const sim = api.settings.kind === 'sim';
  const meter = sim ? null : api.settings.meter;
  // The hold check's countdown: redrawn each second until the re-reading is due.
  const [, setTick] = useState(0);
  const holdDue = s?.level === null ? s.holdDueAtMs : null;
  useEffect(() => {
    if (holdDue === null) return;
    const t = setInterval(() => {
      setTick((n) => n + 1);
      if (Date.now() >= holdDue) clearInterval(t);
    }, 1000);
    return () => clearInterval(t);
  }, [holdDue]);
  if (!s)
    return (
      <div className="drive-cal">
        <div className="row">
          <span data-testid="drive-calibration" data-calibrated={cal ? 'yes' : 'no'}>
            {cal
              ? `Calibrated: ${cal.gainVoltsPerLevel.toFixed(4)} ${api.settings.kind === 'midi' ? 'V per nominal volt' : 'V at full scale'}, offset ${(cal.offsetVolts * 1000).toFixed(1)} mV (${cal.readings.length} readings)`
              : 'Not calibrated: the applied voltage is not known yet.'}
          </span>
        </div>
        <div className="row">
          <button
            onClick={api.startCalibration}
            disabled={!api.open || api.handsOff.active}
            data-testid="drive-calibrate"
          >
            {cal ? 'Calibrate again' : 'Calibrate with my meter'}
          </button>
          {sim && (
            <button
              onClick={() => void api.simMeterAnswer()}
              disabled={!api.open || api.handsOff.active}
              data-testid="drive-sim-calibrate"
            >
              Calibrate with the simulated meter
            </button>
          )}
        </div>
        {meter && (
          <p className="hint">
            Meter: ±({meter.percentOfReading} % + {meter.counts} counts), {meter.resolutionVolts * 1000} mV
            per count: ±{(meterUncertainty(5, meter).boundVolts * 1000).toFixed(1)} mV at 5 V.
          </p>
        )}
        {sim && <p className="hint">Simulated meter: ±(0.05 % + 3 counts), 0.1 mV per count.</p>}
      </div>
    );
  const k = s.readings.length;
  const hold = s.level === null;
  const holdWait =
    hold && s.holdDueAtMs !== null ? Math.max(0, Math.ceil((s.holdDueAtMs - Date.now()) / 1000)) : 0;
  return (
    <div
      className="drive-cal"
      data-testid="drive-cal-session"
      data-reading-index={k}
      data-hold-due-at-ms={hold && s.holdDueAtMs !== null ? String(s.holdDueAtMs) : ''}
    >
      <p>
        {hold
          ? `Hold check: leave the top level on and read the meter again${holdWait > 0 ? ` in about ${holdWait} s` : ' now'}. A level that falls means an AC-coupled output.`
          : `Level ${k + 1} of ${s.targetsVolts.length} is out (about ${fmtV(s.targetsVolts[k], 3)}). Read the meter at the oscillator’s 1 V/oct input jack, with the cable connected, and type the reading.`}
      </p>
      <form
        className="row"
        onSubmit={(e) => {
          e.preventDefault();
          const r = parseNumberField(text, READING_RULE);
          if (r.kind !== 'ok') return;
          api.enterReading(r.value);
          setText('');
        }}
      >
        <NumberField
          label="Meter reading, V"
          value={text}
          onChange={setText}
          rule={READING_RULE}
          testId="drive-cal-reading"
        />
        <button type="submit" data-testid="drive-cal-next">
          Enter
        </button>
        <button type="button" onClick={api.cancelCalibration}>
          Cancel
        </button>
      </form>
      {s.pausedRun && (
        <p className="hint" data-testid="drive-cal-paused-run">
          The run is paused while the drive is calibrated (its levels move the oscillator); its captured steps
          are kept. Resume it when the calibration is done.
        </p>
      )}
      {k > 0 && (
        <p className="hint">Read so far: {s.readings.map((r) => `${r.readingVolts} V`).join(', ')}</p>
      )}
    </div>
  );
}

/** Sets one voltage by hand through the drive (the keypress way of running a plan). */
function SetVolts(props: { api: DriveApi }) {
  const [text, setText] = useState('');
  const { api } = props;
  if (!api.open || !api.calibration) return null;
  const rule: NumberRule = { min: 0, max: api.settings.maxVolts, unit: 'V' };
  return (
    <form
      className="row"
      onSubmit={(e) => {
        e.preventDefault();
        const r = parseNumberField(text, rule);
        if (r.kind === 'ok') api.setLevelVolts(r.value);
      }}
    >
      <NumberField
        label="Set the output to, V"
        value={text}
        onChange={setText}
        rule={rule}
        compact
        disabled={api.handsOff.active}
        testId="drive-set-volts"
      />
      <button type="submit" disabled={api.handsOff.active} data-testid="drive-set">
        Set
      </button>
    </form>
  );
}

const KINDS: { id: DriveKind; label: string }[] = [
  { id: 'off', label: 'Off (set voltages by hand)' },
  { id: 'dc', label: 'DC-coupled interface output' },
  { id: 'midi', label: 'MIDI to a MIDI-to-CV converter' },
  { id: 'sim', label: 'Simulated bench output' },
];

/** The drive's panel (left column). */
export function DrivePanel(props: { api: DriveApi }) {
  const { api } = props;
  const s = api.settings;
  const needsCaution = (s.kind === 'dc' || s.kind === 'midi') && !api.cautionAccepted;
  return (
    <section className="panel drive-panel" aria-label="Drive" data-testid="drive-panel">
      <h2>Drive</h2>
      <div className="row">
        <label className="field grow">
          <span>Sets the voltages</span>
          <select
            value={s.kind}
            onChange={(e) => api.setSettings({ kind: e.target.value as DriveKind })}
            disabled={api.handsOff.active}
            data-testid="drive-kind"
          >
            {KINDS.filter((k) => k.id !== 'sim' || api.simAvailable).map((k) => (
              <option key={k.id} value={k.id}>
                {k.label}
              </option>
            ))}
          </select>
        </label>
      </div>
      {needsCaution && <DriveCaution onAccept={api.acceptCaution} />}
      {s.kind === 'dc' && !needsCaution && (
        <div className="row">
          <DevicePicker
            label="Output device"
            value={s.dcDeviceId}
            onChange={(id) => api.setSettings({ dcDeviceId: id })}
            devices={api.dcOutputs.map((d) => ({ id: d.deviceId, label: d.label }))}
            first={{ id: 'default', label: 'System default output' }}
            testId="drive-dc-device"
          />
          <SettingField
            label="Channel"
            value={s.dcChannel + 1}
            rule={{ min: 1, max: 32, integer: true }}
            onValue={(v) => api.setSettings({ dcChannel: v - 1 })}
            testId="drive-dc-channel"
          />
          <SettingField
            label="V at full scale (manual)"
            value={s.nominalVoltsPerFullScale}
            rule={{ min: 1, max: 30, unit: 'V' }}
            onValue={(v) => api.setSettings({ nominalVoltsPerFullScale: v })}
            testId="drive-dc-fullscale"
          />
        </div>
      )}
      {s.kind === 'midi' && !needsCaution && (
        <>
          <div className="row">
            <DevicePicker
              label="MIDI output"
              value={s.midiPortId}
              onChange={(id) => api.setSettings({ midiPortId: id })}
              devices={api.midiPorts.map((p) => ({ id: p.id, label: p.name }))}
              first={api.midiPorts.length === 0 ? { id: '', label: 'No MIDI output found' } : null}
              testId="drive-midi-port"
            />
            <SettingField
              label="Channel"
              value={s.midiChannel}
              rule={{ min: 1, max: 16, integer: true }}
              onValue={(v) => api.setSettings({ midiChannel: v })}
              testId="drive-midi-channel"
            />
            <div className="field">
              <SettingField
                label="Note at 0 V"
                value={s.zeroVoltsNote}
                rule={{ min: 0, max: 127, integer: true }}
                onValue={(v) => api.setSettings({ zeroVoltsNote: v })}
                testId="drive-midi-zero-note"
              />
              <small>
                {midiToName(s.zeroVoltsNote)} (middle C = {MIDDLE_C_NOTE} = C4); see the converter’s manual
              </small>
            </div>
          </div>
          <div className="row">
            <label className="check">
              <input
                type="checkbox"
                checked={s.bendRangeSemitones !== null}
                onChange={(e) => api.setSettings({ bendRangeSemitones: e.target.checked ? 2 : null })}
                data-testid="drive-midi-bend"
              />
              My converter follows pitch bend
            </label>
            {s.bendRangeSemitones !== null && (
              <SettingField
                label="Bend range, ± semitones"
                value={s.bendRangeSemitones}
                rule={{ min: 0.1, max: 48 }}
                onValue={(v) => api.setSettings({ bendRangeSemitones: v })}
              />
            )}
          </div>
        </>
      )}
      {s.kind !== 'off' && !needsCaution && (
        <>
          <div className="row">
            <SettingField
              label="Maximum, V"
              value={s.maxVolts}
              rule={{ min: 0.5, max: MAX_DRIVE_VOLTS_CEILING, unit: 'V' }}
              onValue={(v) => api.setSettings({ maxVolts: v })}
              disabled={api.handsOff.active}
              testId="drive-max-volts"
            />
            <SettingField
              label="Ramp, ms"
              value={Math.round(s.rampSeconds * 1000)}
              rule={{ min: 5, max: 2000, unit: 'ms' }}
              onValue={(v) => api.setSettings({ rampSeconds: v / 1000 })}
              testId="drive-ramp-ms"
            />
            {s.kind !== 'sim' && (
              <>
                <SettingField
                  label="Meter ± % of reading"
                  value={s.meter.percentOfReading}
                  rule={{ min: 0, max: 10, unit: '%' }}
                  onValue={(v) => api.setSettings({ meter: { ...s.meter, percentOfReading: v } })}
                />
                <SettingField
                  label="+ counts"
                  value={s.meter.counts}
                  rule={{ min: 0, max: 1000, integer: true }}
                  onValue={(v) => api.setSettings({ meter: { ...s.meter, counts: v } })}
                />
                <SettingField
                  label="Count, mV"
                  value={s.meter.resolutionVolts * 1000}
                  rule={{ min: 0.001, max: 1000, unit: 'mV' }}
                  onValue={(v) => api.setSettings({ meter: { ...s.meter, resolutionVolts: v / 1000 } })}
                />
              </>
            )}
          </div>
          <p
            className="drive-status"
            data-testid="drive-status"
            data-open={api.open ? 'yes' : 'no'}
            data-output-volts={String(api.outputVolts)}
            data-output-level={String(api.outputLevel)}
            data-at-rest={api.outputLevel === 0 ? 'yes' : 'no'}
          >
            {!api.open
              ? 'Output closed (0 V)'
              : api.outputLevel === 0
                ? `Output at rest: 0 V sent${api.calibration ? ` (the output’s own offset, ${(api.calibration.offsetVolts * 1000).toFixed(1)} mV, remains)` : ''}`
                : `Output ${fmtV(api.outputVolts, 3)}`}
            {s.kind === 'sim' && ' · patched into the simulated oscillator’s 1 V/oct input'}
          </p>
          <SetVolts api={api} />
          <Calibration api={api} />
        </>
      )}
      {api.message && (
        <p
          className={`message ${api.message.kind}`}
          role={api.message.kind === 'error' ? 'alert' : undefined}
          data-testid="drive-message"
        >
          {api.message.text}
        </p>
      )}
    </section>
  );
}

/** Hands-off controls for the tab shown (right panel, above the tab's own panel). */
export function HandsOffPanel(props: { api: DriveApi; tab: string }) {
  const { api, tab } = props;
  const [loop, setLoop] = useState(false);
  const [passes, setPasses] = useState(3);
  const s = api.settings;
  if (s.kind === 'off') return null;
  const ready = api.open && api.calibration !== null;
  const h = api.handsOff;
  if (tab === 'scale-pair')
    return (
      <div className="hands-off row" data-testid="hands-off-pair">
        <label className="check">
          <input
            type="checkbox"
            checked={api.pairDriving}
            disabled={!ready}
            onChange={(e) => api.setPairDriving(e.target.checked)}
            data-testid="pair-drive"
          />
          The drive alternates the two voltages (turn the scale trimmer meanwhile)
        </label>
        {!ready && <span className="hint">Open and calibrate the drive first.</span>}
      </div>
    );
  if (tab === 'drift')
    return (
      <div className="hands-off row" data-testid="hands-off-drift">
        <span className="hint">
          {ready
            ? 'The drive holds the hold’s voltage while the drift is logged.'
            : 'Open and calibrate the drive to hold the voltage for you.'}
        </span>
      </div>
    );
  if (tab !== 'run') return null;
  const steps = Object.entries(api.applied).map(([k, a]) => ({ step: Number(k), ...a }));
  return (
    <div className="hands-off" data-testid="hands-off">
      <div className="row">
        {!h.active ? (
          <button
            className="primary"
            onClick={() => api.startHandsOff(loop ? passes : null)}
            disabled={!ready}
            data-testid="start-hands-off"
            title={ready ? '' : 'Open and calibrate the drive first'}
          >
            {loop ? `Start trim loop (${passes} passes)` : 'Start hands-off'}
          </button>
        ) : (
          <button onClick={api.stopHandsOff} data-testid="stop-hands-off">
            Stop the drive (to 0 V)
          </button>
        )}
        <label className="check">
          <input
            type="checkbox"
            checked={loop}
            onChange={(e) => setLoop(e.target.checked)}
            disabled={h.active}
            data-testid="trim-loop"
          />
          Trim loop
        </label>
        {loop && (
          <SettingField
            label="Passes"
            value={passes}
            rule={{ min: 1, max: 50, integer: true }}
            onValue={setPasses}
            disabled={h.active}
            testId="trim-loop-passes"
          />
        )}
        <span className="hint" data-testid="hands-off-state" data-active={h.active ? 'yes' : 'no'}>
          {h.active
            ? `Hands off: the drive sets each step${h.loopPasses ? `, pass ${h.passes.length + 1} of ${h.loopPasses}` : ''}.`
            : ready
              ? ''
              : 'Calibrate the drive to run hands-off.'}
        </span>
      </div>
      {h.verdict && (
        <p className="message info" data-testid="loop-verdict">
          {h.verdict}
        </p>
      )}
      {h.passes.length > 0 && (
        <table className="pass-history" data-testid="pass-history">
          <caption>Pass history</caption>
          <thead>
            <tr>
              <th>Pass</th>
              <th>Scale, ¢/oct</th>
              <th>HF, ¢</th>
              <th>Offset, ¢</th>
              <th>Verdict</th>
            </tr>
          </thead>
          <tbody>
            {h.passes.map((p) => (
              <tr
                key={p.pass}
                data-testid="pass-row"
                data-pass={p.pass}
                data-scale-cents-per-octave={
                  p.scaleCentsPerOctave === null ? '' : String(p.scaleCentsPerOctave)
                }
                data-hf-cents={p.hfCents === null ? '' : String(p.hfCents)}
                data-offset-cents={p.offsetCents === null ? '' : String(p.offsetCents)}
              >
                <td>{p.pass}</td>
                <td>{formatCents(p.scaleCentsPerOctave)}</td>
                <td>{formatCents(p.hfCents)}</td>
                <td>{formatCents(p.offsetCents)}</td>
                <td>{p.withinTolerance ? 'within tolerance' : 'trim'}</td>
              </tr>
            ))}
          </tbody>
        </table>
      )}
      {steps.length > 0 && (
        <details className="drive-log">
          <summary>Applied voltages</summary>
          <ul>
            {steps.map((a) => (
              <li
                key={a.step}
                data-testid="drive-step"
                data-step={a.step}
                data-applied-volts={String(a.volts)}
                data-applied-uncertainty-volts={String(a.uncertaintyVolts)}
                data-true-volts={a.trueVolts === null ? '' : String(a.trueVolts)}
                data-level={String(a.level)}
                data-note={a.note === null ? '' : String(a.note)}
              >
                Step {a.step + 1}: {fmtV(a.volts)} ± {(a.uncertaintyVolts * 1000).toFixed(2)} mV
                {a.note !== null && ` (note ${a.note}, ${midiToName(a.note)})`}
                {a.trueVolts !== null && ` · simulated jack ${fmtV(a.trueVolts)}`}
              </li>
            ))}
          </ul>
        </details>
      )}
    </div>
  );
}
