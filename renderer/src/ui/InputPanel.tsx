/**
 * Where the user connects things: the source (audio input or the simulated oscillator), device and
 * channel, sample rate, level meter, the connection cautions, and the simulator's knobs.
 */
import { demoUnits } from '../../../dsp/sim/index.ts';
import type { PitchReading } from '../../../dsp/pitch/index.ts';
import type { InputDevice } from '../audio/input.ts';
import { formatDbfs } from '../../../dsp/format/index.ts';
import { simSettingsForUnit, type SimSettings } from '../lib/sim-settings.ts';

/** Level state for the meter. */
export type LevelState = 'none' | 'ok' | 'quiet' | 'clipping';

/** Too quiet below this RMS level, dBFS (common practice, no source: 50 dB under full scale). */
export const QUIET_RMS_DBFS = -50;
/** Clipping at or above this peak, dBFS (common practice, no source). */
export const CLIP_PEAK_DBFS = -0.3;

/**
 * The meter's verdict on one reading.
 *
 * @example levelState({ kind: 'none', reason: 'silent', level: { rmsDbfs: -90, peakDbfs: -80, clippedFraction: 0 }, timeSeconds: 1 }) // 'quiet'
 */
export function levelState(r: PitchReading | null): LevelState {
  if (!r) return 'none';
  if (
    (r.kind === 'none' && r.reason === 'clipped') ||
    r.level.clippedFraction > 0 ||
    r.level.peakDbfs >= CLIP_PEAK_DBFS
  )
    return 'clipping';
  if ((r.kind === 'none' && r.reason === 'silent') || !(r.level.rmsDbfs > QUIET_RMS_DBFS)) return 'quiet';
  return 'ok';
}

export function LevelMeter(props: { reading: PitchReading | null }) {
  const r = props.reading;
  const st = levelState(r);
  const peak = r ? r.level.peakDbfs : -Infinity;
  const rms = r ? r.level.rmsDbfs : -Infinity;
  const pct = (db: number) => `${Math.max(0, Math.min(100, ((db + 60) / 60) * 100))}%`;
  const text =
    st === 'clipping'
      ? 'Clipping: lower the level into the interface'
      : st === 'quiet'
        ? 'Too quiet to measure: raise the level'
        : st === 'ok'
          ? 'Level good'
          : 'No input';
  return (
    <div
      className={`meter meter-${st}`}
      data-testid="level-meter"
      data-level={st}
      data-rms-dbfs={String(rms)}
    >
      <div className="meter-bar" aria-hidden="true">
        <div className="meter-rms" style={{ width: pct(rms) }} />
        <div className="meter-peak" style={{ left: pct(peak) }} />
        <div className="meter-mark" style={{ left: pct(QUIET_RMS_DBFS) }} />
      </div>
      <div className="meter-text">
        <strong>{text}</strong>
        <span>
          {formatDbfs(rms)} RMS · {formatDbfs(peak)} peak
        </span>
      </div>
    </div>
  );
}

export function Cautions() {
  return (
    <details className="cautions" open>
      <summary>Before you connect</summary>
      <ul>
        <li>
          Modular synth audio is about ±5 V (10 V peak to peak), some oscillators ±8 V: far above a line
          input. Attenuate it first (an attenuator or the interface’s pad).
        </li>
        <li>Switch phantom power (48 V) off on combo inputs.</li>
        <li>Never connect a power rail (Eurorack ±12 V or +5 V) to the interface.</li>
        <li>Follow the manuals of your interface and oscillator; when in doubt, ask someone qualified.</li>
      </ul>
    </details>
  );
}

export interface InputPanelProps {
  source: 'device' | 'sim';
  onSource(s: 'device' | 'sim'): void;
  devices: readonly InputDevice[];
  deviceId: string | null;
  onDevice(id: string | null): void;
  /** The input channel analysed, 0-based; shown from 1. */
  channelIndex: number;
  channelCount: number;
  onChannelIndex(i: number): void;
  sampleRateHz: number | null;
  message: { kind: 'info' | 'warn' | 'error'; text: string } | null;
  /** Set while the audio input is closed after a failure: opens it again. */
  onReopen: (() => void) | null;
  suspended: boolean;
  onResumeAudio(): void;
  reading: PitchReading | null;
  sim: SimSettings;
  onSim(s: SimSettings): void;
  simVolts: number | null;
  onSimVolts(v: number): void;
  runDrivesSim: boolean;
  /** Simulated seconds per second of the clock (`?pace=` in the address); 1 is real time. */
  simPace?: number;
}

function NumberKnob(props: {
  label: string;
  unit: string;
  value: number;
  min: number;
  max: number;
  step: number;
  onChange(v: number): void;
  testId?: string;
}) {
  return (
    <label className="knob">
      <span>{props.label}</span>
      <input
        type="range"
        min={props.min}
        max={props.max}
        step={props.step}
        value={props.value}
        onChange={(e) => props.onChange(Number(e.target.value))}
        data-testid={props.testId}
      />
      <output>{props.unit === 'off' ? 'off' : `${Number(props.value.toFixed(3))} ${props.unit}`}</output>
    </label>
  );
}

export function InputPanel(p: InputPanelProps) {
  const unit = demoUnits.find((u) => u.id === p.sim.unitId);
  return (
    <section className="panel input-panel" aria-label="Input">
      <div className="row">
        <div className="segmented" role="radiogroup" aria-label="Source">
          <button
            role="radio"
            aria-checked={p.source === 'device'}
            className={p.source === 'device' ? 'on' : ''}
            onClick={() => p.onSource('device')}
            data-testid="source-device"
          >
            Audio input
          </button>
          <button
            role="radio"
            aria-checked={p.source === 'sim'}
            className={p.source === 'sim' ? 'on' : ''}
            onClick={() => p.onSource('sim')}
            data-testid="source-sim"
          >
            Simulated oscillator
          </button>
        </div>
        <span className="rate" data-testid="sample-rate">
          {p.sampleRateHz ? `${p.sampleRateHz.toLocaleString('en-US')} Hz` : '— Hz'}
        </span>
      </div>
      {p.source === 'device' ? (
        <div className="row">
          <label className="field grow">
            <span>Device</span>
            <select
              value={p.deviceId ?? ''}
              onChange={(e) => p.onDevice(e.target.value === '' ? null : e.target.value)}
              data-testid="device-select"
            >
              <option value="">System default input</option>
              {p.devices
                .filter((d) => d.deviceId !== 'default' && d.deviceId !== '')
                .map((d) => (
                  <option key={d.deviceId} value={d.deviceId}>
                    {d.label}
                  </option>
                ))}
            </select>
          </label>
          <label className="field">
            <span>Channel</span>
            <select
              value={p.channelIndex}
              onChange={(e) => p.onChannelIndex(Number(e.target.value))}
              data-testid="channel-select"
            >
              {Array.from({ length: Math.max(1, p.channelCount) }, (_, i) => (
                <option key={i} value={i}>
                  {i + 1}
                </option>
              ))}
            </select>
          </label>
        </div>
      ) : (
        <div className="sim">
          <div className="row">
            <label className="field grow">
              <span>Demo unit</span>
              <select
                value={p.sim.unitId}
                onChange={(e) => p.onSim(simSettingsForUnit(e.target.value, p.sim.sampleRateHz))}
                data-testid="sim-unit"
              >
                {demoUnits.map((u) => (
                  <option key={u.id} value={u.id}>
                    {u.serial} · {u.label}
                  </option>
                ))}
              </select>
            </label>
            <label className="field">
              <span>Rate</span>
              <select
                value={p.sim.sampleRateHz}
                data-testid="sim-rate"
                onChange={(e) => p.onSim({ ...p.sim, sampleRateHz: Number(e.target.value) })}
              >
                {[44_100, 48_000, 96_000].map((r) => (
                  <option key={r} value={r}>
                    {r / 1000} kHz
                  </option>
                ))}
              </select>
            </label>
          </div>
          {unit && <p className="hint">{unit.description}</p>}
          {(p.simPace ?? 1) > 1 && (
            <p className="hint" data-testid="sim-pace">
              Running {p.simPace}× faster than real time (pace={p.simPace} in the address): results are the
              same, only the waiting is shorter.
            </p>
          )}
          <div className="knobs">
            <NumberKnob
              label="Scale error"
              unit="¢/oct"
              value={p.sim.scaleErrorCentsPerOctave}
              min={-10}
              max={10}
              step={0.1}
              onChange={(v) => p.onSim({ ...p.sim, scaleErrorCentsPerOctave: v })}
              testId="sim-scale"
            />
            <NumberKnob
              label="Reset time"
              unit="µs"
              value={p.sim.resetMicroseconds}
              min={0}
              max={3}
              step={0.05}
              onChange={(v) => p.onSim({ ...p.sim, resetMicroseconds: v })}
            />
            <NumberKnob
              label="Warm-up drift"
              unit="¢"
              value={p.sim.warmupCents}
              min={-30}
              max={30}
              step={0.5}
              onChange={(v) => p.onSim({ ...p.sim, warmupCents: v })}
            />
            <NumberKnob
              label="Noise (SNR)"
              unit={p.sim.snrDb === null ? 'off' : 'dB'}
              value={p.sim.snrDb ?? 100}
              min={20}
              max={100}
              step={1}
              onChange={(v) => p.onSim({ ...p.sim, snrDb: v >= 100 ? null : v })}
            />
            <NumberKnob
              label="Mains hum"
              unit={p.sim.humDb === null ? 'off' : 'dB'}
              value={p.sim.humDb ?? -80}
              min={-80}
              max={0}
              step={1}
              onChange={(v) => p.onSim({ ...p.sim, humDb: v <= -80 ? null : v })}
            />
            <NumberKnob
              label={p.runDrivesSim ? 'CV (set by the app)' : 'Control voltage'}
              unit="V"
              value={p.simVolts ?? 0}
              min={-2}
              max={9}
              step={0.01}
              onChange={(v) => p.onSimVolts(v)}
            />
          </div>
        </div>
      )}
      {p.suspended && (
        <button className="primary wide" onClick={p.onResumeAudio} data-testid="resume-audio">
          Start listening
        </button>
      )}
      {p.message && (
        <p
          className={`message ${p.message.kind}`}
          role={p.message.kind === 'error' ? 'alert' : 'status'}
          data-testid="input-message"
        >
          {p.message.text}
        </p>
      )}
      {p.onReopen && p.source === 'device' && (
        <button className="wide" onClick={p.onReopen} data-testid="reopen-input">
          Open the input again
        </button>
      )}
      <LevelMeter reading={p.reading} />
      {p.source === 'device' && <Cautions />}
    </section>
  );
}
