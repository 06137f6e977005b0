/**
 * The drive's state for the app: settings and per-device calibrations (kept in localStorage), the
 * open drive, the guided calibration, and the hands-off runs (span run, trim loop, scale pair, hold).
 *
 * The hands-off span run follows the run's own state machine (dsp/calibration/run.ts): as soon as a step is
 * captured (or the run moves to a step by redo or back) the drive ramps to the step to come and that
 * step is told the calibrated voltage it got (`set-applied-volts`); settle detection, pitch checks,
 * pause and redo stay the run's. On any fault the run is paused (its captures kept) and the drive
 * goes back to 0 V.
 */
import { useCallback, useEffect, useRef, useState } from 'react';
import {
  DEFAULT_MAX_DRIVE_VOLTS,
  DEFAULT_RAMP_SECONDS,
  BENCH_METER_4_5_DIGIT,
  SIM_METER_SPEC,
  checkTargetVolts,
  fitDriveCalibration,
  nextCalibrationLevel,
  passFromAdvice,
  simMeterReading,
  trimLoopVerdict,
  type CalibrationReading,
  type DriveCalibration,
  type PassRow,
} from '../../../dsp/drive/index.ts';
import { parsePlan } from '../../../dsp/calibration/index.ts';
import type { RunState } from '../../../dsp/calibration/index.ts';
import type { EngineClient } from '../engine/client.ts';
import type { RunSnapshot, ScalePairConfig } from '../engine/protocol.ts';
import { runAnalysisOf } from '../lib/analysis.ts';
import { listOutputs, type OutputDevice } from './dc-output.ts';
import { Drive, driveKey, type Applied, type DriveKind, type DriveSettings } from './drive.ts';
import { midiOutputs, requestMidi, type MidiAccessLike, type MidiPortLike } from './midi-output.ts';

const STORAGE_KEY = 'spanmeter.drive.v1';

/** Kept between sessions. */
interface Stored {
  settings: DriveSettings;
  cautionAccepted: boolean;
  calibrations: Record<string, DriveCalibration & { savedAt: string }>;
}

export const DEFAULT_DRIVE_SETTINGS: DriveSettings = {
  kind: 'off',
  dcDeviceId: 'default',
  dcChannel: 0,
  nominalVoltsPerFullScale: 10,
  midiPortId: '',
  midiChannel: 1,
  zeroVoltsNote: 36,
  bendRangeSemitones: null,
  maxVolts: DEFAULT_MAX_DRIVE_VOLTS,
  rampSeconds: DEFAULT_RAMP_SECONDS,
  meter: BENCH_METER_4_5_DIGIT,
};

function loadStored(): Stored {
  const empty: Stored = { settings: DEFAULT_DRIVE_SETTINGS, cautionAccepted: false, calibrations: {} };
  try {
    const raw = window.localStorage.getItem(STORAGE_KEY);
    if (!raw) return empty;
    const v = JSON.parse(raw) as Partial<Stored>;
    return {
      settings: { ...DEFAULT_DRIVE_SETTINGS, ...(v.settings ?? {}) },
      cautionAccepted: v.cautionAccepted === true,
      calibrations: v.calibrations && typeof v.calibrations === 'object' ? v.calibrations : {},
    };
  } catch {
    return empty;
  }
}

function saveStored(s: Stored): void {
  try {
    window.localStorage.setItem(STORAGE_KEY, JSON.stringify(s));
  } catch {
    // storage full or refused: the settings last for this session
  }
}

/** A message of the drive. */
export interface DriveMessage {
  readonly kind: 'info' | 'warn' | 'error';
  readonly text: string;
}

/** The guided calibration in progress. */
export interface CalibrationSession {
  readonly targetsVolts: readonly number[];
  readonly readings: readonly CalibrationReading[];
  /** The level out now, waiting for its reading (null when only the hold re-reading is left). */
  readonly level: number | null;
  /** DC only: the top level's re-reading is due at this time (ms since epoch), once every level is read. */
  readonly holdDueAtMs: number | null;
  /** True when the calibration paused a run that was capturing (its levels move the oscillator). */
  readonly pausedRun: boolean;
}

/** Hands-off state. */
export interface HandsOffState {
  readonly active: boolean;
  /** Trim loop: most passes, or null for a single sweep. */
  readonly loopPasses: number | null;
  readonly passes: readonly PassRow[];
  readonly verdict: string | null;
}

/** What the drive components get. */
export interface DriveApi {
  readonly settings: DriveSettings;
  setSettings(patch: Partial<DriveSettings>): void;
  readonly cautionAccepted: boolean;
  acceptCaution(): void;
  readonly simAvailable: boolean;
  readonly dcOutputs: readonly OutputDevice[];
  readonly midiPorts: readonly { id: string; name: string }[];
  readonly open: boolean;
  readonly outputVolts: number;
  /** The level the drive holds: 0 at rest (0 V sent). */
  readonly outputLevel: number;
  readonly calibration: DriveCalibration | null;
  readonly message: DriveMessage | null;
  readonly session: CalibrationSession | null;
  startCalibration(): void;
  enterReading(volts: number): void;
  cancelCalibration(): void;
  simMeterAnswer(): Promise<void>;
  readonly applied: Readonly<Record<number, Applied>>;
  readonly handsOff: HandsOffState;
  startHandsOff(loopPasses: number | null): void;
  stopHandsOff(): void;
  readonly pairDriving: boolean;
  setPairDriving(on: boolean): void;
  setLevelVolts(volts: number): void;
}

/** What the hook needs of the app. */
export interface DriveDeps {
  readonly client: EngineClient;
  readonly source: 'device' | 'sim';
  /** `?drive=sim` asked for the simulated drive. */
  readonly startWithSim: boolean;
  readonly tab: string;
  readonly planText: string;
  readonly pairConfig: ScalePairConfig;
  readonly driftVolts: number | null;
  readonly startRun: () => void;
}

const ACTIVE = new Set(['apply-voltage', 'settling', 'confirm-pitch', 'capturing', 'measuring', 'captured']);
/** Seconds between the passes of a trim loop, for the trimmer. */
const LOOP_GAP_MS = 1500;
/** DC hold check: the top level is read again after this long, ms. */
const HOLD_CHECK_MS = 10_000;

/**
 * The step a voltage set by hand belongs to: the current one while it waits, settles or is captured;
 * once it is captured and the run is moving on by itself, the next pending one (a voltage typed then
 * is for the step to come, never for the step just taken). Null when no run is capturing.
 */
export function stepForSetVolts(state: RunState): number | null {
  if (!ACTIVE.has(state.phase)) return null;
  if (state.phase !== 'captured') return state.current;
  const next = state.steps.findIndex((st, i) => i > state.current && st.status === 'pending');
  return next >= 0 ? next : null;
}

function calibrationTargets(maxVolts: number, kind: DriveKind): number[] {
  const top = Math.max(1, Math.min(7, Math.floor(0.9 * maxVolts)));
  if (kind === 'midi') return [...new Set([0, Math.round(top / 3), Math.round((2 * top) / 3), top])];
  return [0, top / 3, (2 * top) / 3, top].map((v) => Math.round(v * 1000) / 1000);
}

export function useDrive(deps: DriveDeps): DriveApi {
  const { client } = deps;
  const [stored, setStored] = useState<Stored>(() => {
    const s = loadStored();
    return deps.startWithSim && deps.source === 'sim'
      ? { ...s, settings: { ...s.settings, kind: 'sim' } }
      : s;
  });
  useEffect(() => saveStored(stored), [stored]);
  const settings = stored.settings;
  const [dcOutputs, setDcOutputs] = useState<OutputDevice[]>([]);
  const [midiAccess, setMidiAccess] = useState<MidiAccessLike | null>(null);
  const [midiPorts, setMidiPorts] = useState<MidiPortLike[]>([]);
  const [message, setMessage] = useState<DriveMessage | null>(null);
  const [open, setOpen] = useState(false);
  const [outputVolts, setOutputVolts] = useState(0);
  const [outputLevel, setOutputLevel] = useState(0);
  const [session, setSession] = useState<CalibrationSession | null>(null);
  const [applied, setApplied] = useState<Record<number, Applied>>({});
  const [handsOff, setHandsOff] = useState<HandsOffState>({
    active: false,
    loopPasses: null,
    passes: [],
    verdict: null,
  });
  const [pairDriving, setPairDriving] = useState(false);
  const driveRef = useRef<Drive | null>(null);
  const handsRef = useRef(handsOff);
  handsRef.current = handsOff;
  const lastStepRef = useRef(-1);
  const depsRef = useRef(deps);
  depsRef.current = deps;
  const runRef = useRef<RunState | null>(null);

  const simAvailable = deps.source === 'sim';
  const usable = settings.kind === 'sim' ? simAvailable : settings.kind !== 'off' && stored.cautionAccepted;
  const deviceLabel =
    settings.kind === 'dc'
      ? (dcOutputs.find((d) => d.deviceId === settings.dcDeviceId)?.label ?? settings.dcDeviceId)
      : settings.kind === 'midi'
        ? (midiPorts.find((p) => p.id === settings.midiPortId)?.name ?? settings.midiPortId)
        : '';
  const key = driveKey(settings, deviceLabel ?? '');
  const calibration = stored.calibrations[key] ?? null;

  const setSettings = useCallback((patch: Partial<DriveSettings>) => {
    setStored((s) => ({ ...s, settings: { ...s.settings, ...patch } }));
  }, []);

  const showVolts = useCallback(() => {
    setOutputVolts(driveRef.current?.volts ?? 0);
    setOutputLevel(driveRef.current?.level ?? 0);
  }, []);

  /** The drive back to 0 V (along its ramp), and the panel told. */
  const restDrive = useCallback(() => {
    driveRef.current?.rest();
    showVolts();
  }, [showVolts]);

  /**
   * Pauses a run that is capturing (its captures kept); true when there was one. A calibration does
   * this first, since its levels move the oscillator; so does a fault and the drive's Stop.
   */
  const pauseActiveRun = useCallback((): boolean => {
    const r = runRef.current;
    if (!r || !ACTIVE.has(r.phase)) return false;
    client.send({ type: 'run-event', event: { type: 'pause' } });
    return true;
  }, [client]);

  /** Sets the hands-off state now (the ref the run's messages read) and for the next render. */
  const setHands = useCallback((next: HandsOffState) => {
    handsRef.current = next;
    setHandsOff(next);
  }, []);

  /**
   * The one way a hands-off run ends (done, stopped, aborted or on a fault): no step is set any more
   * and the drive goes back to 0 V. `patch` adds the last pass and the verdict.
   */
  const endHandsOff = useCallback(
    (patch: Partial<HandsOffState> = {}) => {
      lastStepRef.current = -1;
      setHands({ ...handsRef.current, ...patch, active: false });
      restDrive();
    },
    [setHands, restDrive],
  );

  /** Any fault: the run paused and kept, the drive back to 0 V, hands-off stopped. */
  const fault = useCallback(
    (text: string) => {
      const active = pauseActiveRun();
      endHandsOff();
      setPairDriving(false);
      setSession(null);
      // A run the fault paused, or one already paused (a calibration pauses it), is kept as it is.
      const kept =
        active || runRef.current?.phase === 'paused'
          ? ' The run is kept with its captured steps, paused.'
          : '';
      setMessage({ kind: 'error', text: `${text}${kept} The drive is back at 0 V.` });
    },
    [pauseActiveRun, endHandsOff],
  );

  // ---- Devices -------------------------------------------------------------------------------
  useEffect(() => {
    if (settings.kind !== 'dc') return;
    void listOutputs().then(setDcOutputs);
  }, [settings.kind]);

  // MIDI access is asked for once each time the MIDI drive is chosen (not again when a port is picked).
  useEffect(() => {
    if (settings.kind !== 'midi' || !stored.cautionAccepted) return;
    let cancelled = false;
    void requestMidi().then((r) => {
      if (cancelled) return;
      if (!r.ok) {
        setMidiAccess(null);
        setMidiPorts([]);
        fault(r.message);
        return;
      }
      setMidiAccess(r.access);
      const ports = midiOutputs(r.access);
      setMidiPorts(ports);
      if (ports.length === 0)
        setMessage({ kind: 'warn', text: 'No MIDI output found: connect the converter.' });
    });
    return () => {
      cancelled = true;
    };
  }, [settings.kind, stored.cautionAccepted, fault]);

  // The port kept from last time is gone (or none was chosen): take the first one listed.
  useEffect(() => {
    if (settings.kind !== 'midi' || midiPorts.length === 0) return;
    if (!midiPorts.some((p) => p.id === settings.midiPortId)) setSettings({ midiPortId: midiPorts[0].id });
  }, [settings.kind, midiPorts, settings.midiPortId, setSettings]);

  // ---- The open drive ------------------------------------------------------------------------
  const midiPort = midiPorts.find((p) => p.id === settings.midiPortId) ?? null;
  useEffect(() => {
    let cancelled = false;
    const was = driveRef.current;
    driveRef.current = null;
    setOpen(false);
    void was?.close();
    client.send({ type: 'sim-patch', patched: settings.kind === 'sim' && simAvailable });
    if (!usable || (settings.kind === 'midi' && !midiPort)) return;
    void Drive.open(settings, {
      simSend: simAvailable
        ? (v, g) => client.send({ type: 'sim-volts', volts: v, glideSeconds: g })
        : undefined,
      midiPort,
    }).then((r) => {
      if (cancelled) {
        if (r.ok) void r.drive.close();
        return;
      }
      if (!r.ok) {
        setMessage({ kind: 'error', text: r.message });
        return;
      }
      driveRef.current = r.drive;
      setOpen(true);
      setMessage(null);
      const ctx = r.drive.audioContext;
      if (ctx) {
        ctx.addEventListener?.('error', () => fault('The drive’s audio output failed (device lost).'));
      }
    });
    return () => {
      cancelled = true;
    };
    // Re-open on what identifies the output; the other settings are read when used.
  }, [
    settings.kind,
    settings.dcDeviceId,
    settings.dcChannel,
    settings.midiChannel,
    settings.zeroVoltsNote,
    midiPort,
    usable,
    simAvailable,
    client,
    fault,
  ]);

  // Settings read on every use (max, ramp, note map) reach the open drive without reopening it.
  useEffect(() => {
    if (!driveRef.current?.updateSettings(settings)) return;
    showVolts();
    setMessage({
      kind: 'warn',
      text: `The maximum is now ${settings.maxVolts} V, below the voltage the drive held: it went back to 0 V.`,
    });
  }, [settings, open, showVolts]);

  useEffect(() => {
    driveRef.current?.setCalibration(calibration);
    showVolts();
  }, [calibration, open, showVolts]);

  useEffect(
    () => () => {
      void driveRef.current?.close(true);
      client.send({ type: 'sim-patch', patched: false });
    },
    [client],
  );

  // The window closing: straight to 0 V (no time for a ramp).
  useEffect(() => {
    const f = () => void driveRef.current?.close(true);
    window.addEventListener('pagehide', f);
    window.addEventListener('beforeunload', f);
    return () => {
      window.removeEventListener('pagehide', f);
      window.removeEventListener('beforeunload', f);
    };
  }, []);

  // The DC device unplugged.
  useEffect(() => {
    const md = navigator.mediaDevices;
    if (settings.kind !== 'dc' || !md?.addEventListener) return;
    const onChange = async () => {
      const list = await listOutputs();
      setDcOutputs(list);
      const id = settings.dcDeviceId;
      if (driveRef.current && id && id !== 'default' && !list.some((d) => d.deviceId === id)) {
        fault('The drive’s output device was disconnected.');
        const d = driveRef.current;
        driveRef.current = null;
        setOpen(false);
        void d?.close(true);
      }
    };
    md.addEventListener('devicechange', onChange);
    return () => md.removeEventListener('devicechange', onChange);
  }, [settings.kind, settings.dcDeviceId, fault]);

  // The MIDI port unplugged.
  useEffect(() => {
    if (!midiAccess) return;
    midiAccess.onstatechange = () => {
      const ports = midiOutputs(midiAccess);
      setMidiPorts(ports);
      const p = ports.find((x) => x.id === settings.midiPortId);
      if (driveRef.current && settings.kind === 'midi' && (!p || p.state === 'disconnected'))
        fault('The MIDI output to the converter was disconnected.');
    };
    return () => {
      midiAccess.onstatechange = null;
    };
  }, [midiAccess, settings.midiPortId, settings.kind, fault]);

  // ---- Calibration ---------------------------------------------------------------------------
  /** Sends a calibration level; returns the level actually sent (a note's level, a 32-bit sample). */
  const sendLevel = useCallback(
    (level: number): number => {
      const sent = driveRef.current?.setLevel(level) ?? level;
      showVolts();
      return sent;
    },
    [showVolts],
  );

  const startCalibration = useCallback(() => {
    const d = driveRef.current;
    if (!d) {
      setMessage({ kind: 'error', text: 'Open the drive first.' });
      return;
    }
    const pausedRun = pauseActiveRun();
    const targets = calibrationTargets(settings.maxVolts, settings.kind);
    const level = sendLevel(nextCalibrationLevel(targets, [], d.nominalGain) ?? 0);
    setSession({ targetsVolts: targets, readings: [], level, holdDueAtMs: null, pausedRun });
    setMessage(null);
  }, [settings.maxVolts, settings.kind, sendLevel, pauseActiveRun]);

  const cancelCalibration = useCallback(() => {
    setSession(null);
    restDrive();
  }, [restDrive]);

  const finishCalibration = useCallback(
    (
      readings: CalibrationReading[],
      hold: { firstVolts: number; laterVolts: number; seconds: number } | undefined,
    ) => {
      const d = driveRef.current;
      setSession(null);
      restDrive();
      if (!d) return;
      const meter = settings.kind === 'sim' ? SIM_METER_SPEC : settings.meter;
      const r = fitDriveCalibration(readings, meter, { expectedGain: d.nominalGain, holdCheck: hold });
      if (r.kind !== 'ok') {
        fault(r.message);
        return;
      }
      const c = r.calibration;
      setStored((s) => ({
        ...s,
        calibrations: { ...s.calibrations, [key]: { ...c, savedAt: new Date().toISOString() } },
      }));
      const fs = settings.kind === 'midi' ? 'V per nominal volt' : 'V at full scale';
      setMessage({
        kind: 'info',
        text: `Calibrated: ${c.gainVoltsPerLevel.toFixed(4)} ${fs}, offset ${(c.offsetVolts * 1000).toFixed(1)} mV, largest residual ${(c.maxAbsResidualVolts * 1000).toFixed(2)} mV. Kept for this output.`,
      });
    },
    [settings.kind, settings.meter, key, fault, showVolts],
  );

  const enterReading = useCallback(
    (volts: number) => {
      const s = session;
      const d = driveRef.current;
      if (!s || !d) return;
      if (!Number.isFinite(volts)) {
        setMessage({ kind: 'error', text: 'Type the meter’s reading in volts, e.g. 2.335.' });
        return;
      }
      if (Math.abs(volts) > settings.maxVolts) {
        fault(`The meter read ${volts} V, above the maximum of ${settings.maxVolts} V: calibration stopped.`);
        return;
      }
      if (s.level === null) {
        // The hold re-reading of the top level.
        const top = s.readings[s.readings.length - 1];
        const now = Date.now();
        if (s.holdDueAtMs !== null && now < s.holdDueAtMs) {
          // Read too soon, a decaying (AC-coupled) output would not have fallen yet: not taken.
          const wait = Math.ceil((s.holdDueAtMs - now) / 1000);
          setMessage({
            kind: 'warn',
            text: `Too soon for the hold check: read the meter again in ${wait} s (the level must be held ${HOLD_CHECK_MS / 1000} s).`,
          });
          return;
        }
        const seconds = s.holdDueAtMs ? (now - (s.holdDueAtMs - HOLD_CHECK_MS)) / 1000 : HOLD_CHECK_MS / 1000;
        finishCalibration([...s.readings], {
          firstVolts: top.readingVolts,
          laterVolts: volts,
          seconds: Math.round(seconds),
        });
        return;
      }
      const readings = [...s.readings, { level: s.level, readingVolts: volts }];
      const next = nextCalibrationLevel(s.targetsVolts, readings, d.nominalGain);
      if (next !== null) {
        setSession({ ...s, readings, level: sendLevel(next) });
        return;
      }
      if (settings.kind === 'dc') {
        setSession({ ...s, readings, level: null, holdDueAtMs: Date.now() + HOLD_CHECK_MS });
        return;
      }
      finishCalibration(readings, undefined);
    },
    [session, settings.maxVolts, settings.kind, sendLevel, finishCalibration, fault],
  );

  /** Simulated bench: the simulated meter answers every prompt, after each ramp. */
  const simMeterAnswer = useCallback(async () => {
    const d = driveRef.current;
    if (!d || settings.kind !== 'sim') return;
    const targets = calibrationTargets(settings.maxVolts, 'sim');
    const readings: CalibrationReading[] = [];
    const pausedRun = pauseActiveRun();
    setMessage(null);
    for (;;) {
      const level = nextCalibrationLevel(targets, readings, d.nominalGain);
      if (level === null) break;
      const sent = d.setLevel(level);
      showVolts();
      setSession({
        targetsVolts: targets,
        readings: [...readings],
        level: sent,
        holdDueAtMs: null,
        pausedRun,
      });
      await new Promise((r) => setTimeout(r, Math.ceil(settings.rampSeconds * 1000) + 50));
      readings.push({ level: sent, readingVolts: simMeterReading(d.simTrueVolts ?? 0) });
    }
    finishCalibration(readings, undefined);
  }, [settings.kind, settings.maxVolts, settings.rampSeconds, showVolts, finishCalibration, pauseActiveRun]);

  // ---- Hands-off span run and trim loop ------------------------------------------------------
  /** Tells the run which calibrated voltage a step got (it takes it in place of the nominal one). */
  const tellRun = useCallback(
    (stepIndex: number, a: Applied) => {
      client.send({
        type: 'run-event',
        event: {
          type: 'set-applied-volts',
          stepIndex,
          volts: a.volts,
          uncertaintyVolts: a.uncertaintyVolts,
        },
      });
      setApplied((x) => ({ ...x, [stepIndex]: a }));
    },
    [client],
  );

  const applyStep = useCallback(
    (state: RunState, i: number) => {
      const d = driveRef.current;
      if (!d) return;
      const r = d.apply(state.steps[i].nominalVolts);
      showVolts();
      if (!r.ok) {
        fault(r.message);
        return;
      }
      lastStepRef.current = i;
      tellRun(i, r.applied);
    },
    [fault, showVolts, tellRun],
  );

  const onRun = useCallback(
    (run: RunSnapshot | null) => {
      const state = run?.state ?? null;
      runRef.current = state;
      const h = handsRef.current;
      if (!h.active) return;
      if (!state || state.phase === 'aborted') {
        endHandsOff();
        return;
      }
      if (state.phase === 'finished') {
        const passNo = h.passes.length + 1;
        // The worker's calibration of the finished run (dsp/calibration/pipeline.ts), as every other view shows it.
        const a = runAnalysisOf(run!.calibration);
        const row = passFromAdvice(passNo, a.advice);
        const passes = [...h.passes, row];
        if (h.loopPasses === null) {
          endHandsOff({ passes, verdict: 'Sweep done: the table is complete.' });
          return;
        }
        const v = trimLoopVerdict(passes, h.loopPasses);
        const verdict =
          v === 'done'
            ? `Pass ${passNo}: scale, HF and offset are within tolerance. Done.`
            : v === 'nothing-to-trim'
              ? `Pass ${passNo}: no trim is advised; the advice says what would settle the verdict.`
              : v === 'out-of-passes'
                ? `Pass ${passNo} of ${h.loopPasses}: the loop is over; trim and start it again if the errors still move.`
                : `Pass ${passNo} done: trim now; pass ${passNo + 1} starts in a moment.`;
        if (v !== 'again') {
          endHandsOff({ passes, verdict });
          return;
        }
        setHands({ ...h, passes, verdict });
        lastStepRef.current = -1;
        setTimeout(() => {
          if (!handsRef.current.active) return;
          depsRef.current.startRun();
        }, LOOP_GAP_MS);
        return;
      }
      // Each step is set as soon as the one before it is captured (while the run holds its capture),
      // as a technician would turn the reference on; a step redone or gone back to is set again.
      const step = stepForSetVolts(state);
      if (step !== null && step !== lastStepRef.current) applyStep(state, step);
    },
    [applyStep, endHandsOff, setHands],
  );

  useEffect(
    () =>
      client.onMessage((m) => {
        if (m.type === 'run') onRun(m.run);
        else if (m.type === 'tick' && m.run !== undefined) onRun(m.run);
      }),
    [client, onRun],
  );

  const startHandsOff = useCallback(
    (loopPasses: number | null) => {
      const d = driveRef.current;
      if (!d) {
        setMessage({ kind: 'error', text: 'Choose and open a drive first (left panel, Drive).' });
        return;
      }
      if (!d.calibration) {
        setMessage({
          kind: 'error',
          text: 'Calibrate the drive first, so every step knows the voltage it got.',
        });
        return;
      }
      const p = parsePlan(depsRef.current.planText);
      if (p.kind !== 'ok') {
        setMessage({ kind: 'error', text: `The plan cannot be driven: ${p.message}` });
        return;
      }
      for (const v of p.volts) {
        const c = checkTargetVolts(v, settings.maxVolts);
        if (c.kind !== 'ok') {
          setMessage({ kind: 'error', text: `The plan cannot be driven: ${c.message}` });
          return;
        }
      }
      lastStepRef.current = -1;
      setMessage(null);
      const r = runRef.current;
      if (r && r.phase === 'paused') {
        // Go on with the run that a pause or a fault stopped: its captures stay, this step is set again.
        setHands({ ...handsRef.current, active: true });
        client.send({ type: 'run-event', event: { type: 'resume' } });
        return;
      }
      setApplied({});
      setHands({ active: true, loopPasses, passes: [], verdict: null });
      depsRef.current.startRun();
    },
    [settings.maxVolts, client, setHands],
  );

  const stopHandsOff = useCallback(() => {
    pauseActiveRun();
    endHandsOff();
  }, [pauseActiveRun, endHandsOff]);

  // ---- Scale pair: the drive alternates the two voltages ------------------------------------
  useEffect(() => {
    if (!pairDriving || deps.tab !== 'scale-pair' || !open) return;
    const d = driveRef.current;
    if (!d) return;
    const c = deps.pairConfig;
    let high = false;
    const step = () => {
      const r = d.apply(high ? c.voltsHigh : c.voltsLow);
      showVolts();
      if (!r.ok) fault(r.message);
      high = !high;
    };
    step();
    const t = setInterval(step, Math.max(1, c.alternateSeconds) * 1000);
    return () => {
      clearInterval(t);
      d.rest();
      showVolts();
    };
  }, [pairDriving, deps.tab, deps.pairConfig, open, fault, showVolts]);

  // ---- Hold for the drift log: the drive holds the hold's voltage ---------------------------
  useEffect(() => {
    const v = deps.driftVolts;
    const d = driveRef.current;
    if (v === null || deps.tab !== 'drift' || !open || !d || !d.calibration) return;
    const r = d.apply(v);
    showVolts();
    if (!r.ok) fault(r.message);
    return () => {
      d.rest();
      showVolts();
    };
  }, [deps.driftVolts, deps.tab, open, fault, showVolts]);

  const setLevelVolts = useCallback(
    (volts: number) => {
      const d = driveRef.current;
      if (!d) return;
      const r = d.apply(volts);
      showVolts();
      if (!r.ok) setMessage({ kind: 'error', text: r.message });
      else setMessage(null);
      const st = runRef.current;
      const step = st ? stepForSetVolts(st) : null;
      if (r.ok && step !== null) tellRun(step, r.applied);
    },
    [showVolts, tellRun],
  );

  const acceptCaution = useCallback(() => setStored((s) => ({ ...s, cautionAccepted: true })), []);

  // A new object each render, like the panels that read it (none of them is memoised).
  return {
    settings,
    setSettings,
    cautionAccepted: stored.cautionAccepted,
    acceptCaution,
    simAvailable,
    dcOutputs,
    midiPorts: midiPorts.map((p) => ({ id: p.id, name: p.name ?? p.id })),
    open,
    outputVolts,
    outputLevel,
    calibration,
    message,
    session,
    startCalibration,
    enterReading,
    cancelCalibration,
    simMeterAnswer,
    applied,
    handsOff,
    startHandsOff,
    stopHandsOff,
    pairDriving,
    setPairDriving,
    setLevelVolts,
  };
}
