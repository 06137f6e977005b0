/**
 * Spanmeter's window: the input and live reading on the left, the work on the right (a guided run,
 * the two-point scale trim, the drift hold, the unit book), and a status line. State that the
 * engine owns arrives through {@link EngineClient}; this component holds only what the user chose.
 */
import { useCallback, useEffect, useMemo, useRef, useState, useSyncExternalStore } from 'react';
import { A4_HZ } from '../../dsp/notes.ts';
import { PLAN_PRESETS, formatPlan, parsePlan, presetPlan } from '../../dsp/plan.ts';
import { isRunResult, resultToJsonText, type CalibrationResult } from '../../dsp/result.ts';
import { isRunActive, serializeRun, validateRunState, type RunState } from '../../dsp/run.ts';
import type { JsonValue, UnitRecord } from '../../main/api-types.ts';
import { slugify } from '../../main/record-id.ts';
import { listInputs, openInput, type InputDevice, type OpenInput } from './audio/input.ts';
import { EngineClient } from './engine/client.ts';
import type { EngineMode, TwoPointConfig, UserRunEvent } from './engine/protocol.ts';
import { recordingAsRunAnalysis, runAnalysisOf } from './lib/analysis.ts';
import { runToCsv } from './lib/export.ts';
import { formatClock } from './lib/format.ts';
import { parseStartupParams } from './lib/params.ts';
import { loadSetup, saveSetup, setupOptions, type SetupForm, type SetupStorage } from './lib/setup.ts';
import { DEFAULT_SIM_UNIT, simOptions, simSettingsForUnit, type SimSettings } from './lib/sim-settings.ts';
import { pickStore } from './storage/store.ts';
import { AutosaveQueue, type AutosaveStatus } from './storage/autosave.ts';
import { useDriftKeeper } from './ui/DriftLogBar.tsx';
import { StripChart } from './ui/charts.tsx';
import { DriftPanel } from './ui/DriftPanel.tsx';
import { FrameMeter } from './ui/FrameMeter.tsx';
import { InputPanel } from './ui/InputPanel.tsx';
import { LiveReadout } from './ui/LiveReadout.tsx';
import { PrintReport } from './ui/PrintReport.tsx';
import { EMPTY_UNIT_INFO, RecordsPanel, type UnitInfo } from './ui/RecordsPanel.tsx';
import { RecordingPanel } from './ui/RecordingPanel.tsx';
import { OpenWavControl, RUN_KEYS, RunPanel } from './ui/RunPanel.tsx';
import { SetupPanel } from './ui/SetupPanel.tsx';
import { useDrive } from './drive/use-drive.ts';
import { DrivePanel, HandsOffPanel } from './ui/DrivePanel.tsx';
import { TwoPointPanel } from './ui/TwoPointPanel.tsx';

type Tab = 'run' | 'pair' | 'drift' | 'book';

const TABS: { id: Tab; label: string }[] = [
  { id: 'run', label: 'Span run' },
  { id: 'pair', label: 'Scale pair' },
  { id: 'drift', label: 'Hold & drift' },
  { id: 'book', label: 'Unit book' },
];

function modeFor(tab: Tab): EngineMode {
  return tab === 'pair' ? 'two-point' : tab === 'drift' ? 'drift' : 'run';
}

/**
 * Settle time used when a recording is analysed, s: `analyzeRecording`'s default, the same as
 * `spanmeter analyze` without `--settle` (dsp/recording.ts).
 */
const RECORDING_SETTLE_SECONDS = 0.5;

/** Said wherever a fault stops the input while a run is in progress. */
const RUN_KEPT = 'The run is kept with its captured steps, paused: press Resume once the input is back.';

function capturedCount(s: RunState): number {
  return s.steps.filter((x) => x.capture !== null).length;
}

/** `window.localStorage`, or null where the page may not use it. */
function pageStorage(): SetupStorage | null {
  try {
    return window.localStorage;
  } catch {
    return null;
  }
}

export function App() {
  const params = useMemo(() => parseStartupParams(window.location.search), []);
  const client = useMemo(() => new EngineClient(), []);
  const view = useSyncExternalStore(client.subscribe, client.getView);
  const store = useMemo(() => pickStore(), []);
  const [autosaveStatus, setAutosaveStatus] = useState<AutosaveStatus>({ kind: 'idle' });
  const runAutosave = useMemo(
    () => new AutosaveQueue<JsonValue>((s, seq) => store.autosave(s, seq), setAutosaveStatus, 'the run'),
    [store],
  );

  const [source, setSource] = useState<'device' | 'sim'>(params.input);
  const [devices, setDevices] = useState<InputDevice[]>([]);
  const [deviceId, setDeviceId] = useState<string | null>(null);
  const [channel, setChannel] = useState(0);
  const [channelCount, setChannelCount] = useState(1);
  const [inputMsg, setInputMsg] = useState<{ kind: 'info' | 'warn' | 'error'; text: string } | null>(
    params.problems.length > 0 ? { kind: 'warn', text: params.problems.join(' ') } : null,
  );
  const [suspended, setSuspended] = useState(false);
  const inputRef = useRef<OpenInput | null>(null);
  const [sim, setSim] = useState<SimSettings>(() =>
    simSettingsForUnit(params.unitId ?? DEFAULT_SIM_UNIT, params.simRateHz ?? 48_000),
  );
  const [planText, setPlanText] = useState(params.planText ?? formatPlan(presetPlan().volts));
  const [tab, setTab] = useState<Tab>('run');
  const [info, setInfo] = useState<UnitInfo>(EMPTY_UNIT_INFO);
  const driftKeeper = useDriftKeeper(store, view.drift, info.unitName);
  const [pairConfig, setPairConfig] = useState<TwoPointConfig>({
    voltsLow: 1,
    voltsHigh: 3,
    toleranceCents: 1,
    alternateSeconds: 3,
  });
  const [resumeOffer, setResumeOffer] = useState<{ state: RunState; text: string } | null>(null);
  const [exportMsg, setExportMsg] = useState<string | null>(null);
  const [openRecord, setOpenRecord] = useState<UnitRecord | null>(null);
  /** Whether the Span run tab shows the opened recording (true) or the live run. */
  const [showRecording, setShowRecording] = useState(false);
  /** Bumped by "Open the input again" to reopen the audio input after a failure. */
  const [inputAttempt, setInputAttempt] = useState(0);
  const [inputClosed, setInputClosed] = useState(false);
  /** The Span run's Setup (clock correction, fit range, input network), kept between sessions. */
  const [setupForm, setSetupForm] = useState<SetupForm>(() => loadSetup(pageStorage()));
  const setup = useMemo(() => setupOptions(setupForm), [setupForm]);
  useEffect(() => saveSetup(pageStorage(), setupForm), [setupForm]);

  // ---- Input source ------------------------------------------------------------------------
  const inputGone = useCallback(
    (why: string) => {
      inputRef.current?.close();
      inputRef.current = null;
      client.send({ type: 'source-stop', reason: why });
      setInputClosed(true);
      setInputMsg({
        kind: 'error',
        text: `${why} Reconnect the interface and press “Open the input again”.`,
      });
    },
    [client],
  );

  useEffect(() => {
    let cancelled = false;
    inputRef.current?.close();
    inputRef.current = null;
    if (source === 'sim') {
      client.send({ type: 'source-sim', sampleRateHz: sim.sampleRateHz, options: simOptions(sim), volts: 0 });
      setSuspended(false);
      return;
    }
    void (async () => {
      const r = await openInput({
        deviceId,
        channel,
        connectEngine: (port, rate) => client.send({ type: 'source-live', sampleRateHz: rate, port }, [port]),
        onChannels: (n) => setChannelCount(n),
        onEnded: () => inputGone('The audio input stopped (unplugged or taken by the system).'),
      });
      if (cancelled) {
        if (r.ok) r.input.close();
        return;
      }
      if (!r.ok) {
        setInputMsg({ kind: 'error', text: r.failure.message });
        setInputClosed(true);
        client.send({ type: 'source-stop', reason: r.failure.kind });
        return;
      }
      inputRef.current = r.input;
      setInputClosed(false);
      setInputMsg(params.problems.length > 0 ? { kind: 'warn', text: params.problems.join(' ') } : null);
      const ctx = r.input.context;
      setSuspended(ctx.state === 'suspended');
      ctx.onstatechange = () => setSuspended(ctx.state === 'suspended');
      setDevices(await listInputs());
    })();
    return () => {
      cancelled = true;
    };
    // The sim's knobs are sent separately below; only its sample rate restarts the source.
  }, [source, deviceId, sim.sampleRateHz, client, inputGone, inputAttempt]);

  useEffect(() => {
    if (source === 'sim') client.send({ type: 'sim-options', options: simOptions(sim) });
  }, [sim, source, client]);

  useEffect(() => {
    inputRef.current?.setChannel(channel);
  }, [channel]);

  useEffect(() => {
    const md = navigator.mediaDevices;
    if (!md?.addEventListener) return;
    const onChange = async () => {
      const list = await listInputs();
      setDevices(list);
      if (source === 'device' && deviceId !== null && !list.some((d) => d.deviceId === deviceId)) {
        inputGone('The chosen audio input was disconnected.');
      }
    };
    md.addEventListener('devicechange', onChange);
    return () => md.removeEventListener('devicechange', onChange);
  }, [source, deviceId, inputGone]);

  const resumeAudio = useCallback(() => {
    void inputRef.current?.resume();
  }, []);

  useEffect(() => {
    const f = () => resumeAudio();
    window.addEventListener('pointerdown', f);
    window.addEventListener('keydown', f);
    return () => {
      window.removeEventListener('pointerdown', f);
      window.removeEventListener('keydown', f);
    };
  }, [resumeAudio]);

  // ---- Modes ---------------------------------------------------------------------------------
  useEffect(() => {
    client.send({ type: 'mode', mode: modeFor(tab) });
  }, [tab, client]);

  useEffect(() => {
    client.send({ type: 'two-point-config', config: pairConfig });
  }, [pairConfig, client]);

  // ---- Autosave and resume -------------------------------------------------------------------
  useEffect(() => {
    let last = -1;
    return client.onMessage((m) => {
      const run = m.type === 'run' ? m.run : m.type === 'tick' ? m.run : undefined;
      if (!run) return;
      const n = capturedCount(run.state);
      if (n !== last) {
        if (n > 0) runAutosave.push(JSON.parse(serializeRun(run.state)) as JsonValue);
        last = n;
      }
    });
  }, [client, runAutosave]);

  useEffect(() => {
    void (async () => {
      const r = await store.loadAutosave();
      if (!r.ok || r.value.kind !== 'found') return;
      const v = validateRunState(r.value.state);
      if (v.kind !== 'ok' || capturedCount(v.state) === 0) return;
      const fin = !isRunActive(v.state);
      setResumeOffer({
        state: v.state,
        text: `${fin ? 'The last run' : 'An unfinished run'} from ${new Date(r.value.savedAt).toLocaleString()}: ${capturedCount(v.state)} of ${v.state.steps.length} steps captured.`,
      });
    })();
  }, [store]);

  // ---- Run -----------------------------------------------------------------------------------
  const run = view.run;
  const runState = run?.state ?? null;
  // The worker calibrates the run (dsp/pipeline.ts) with the Setup sent here; the page only shows it.
  useEffect(() => {
    client.send({
      type: 'calibration-setup',
      setup: {
        a4Hz: A4_HZ,
        clockPpm: setup.clockPpm,
        ...(setup.fitFromVolts === undefined ? {} : { fitFromVolts: setup.fitFromVolts }),
        ...(setup.fitToVolts === undefined ? {} : { fitToVolts: setup.fitToVolts }),
        ...(setup.network === undefined ? {} : { network: setup.network }),
      },
    });
  }, [client, setup]);
  const calibration = run?.calibration ?? null;
  const analysis = useMemo(() => (calibration ? runAnalysisOf(calibration) : null), [calibration]);
  const active = isRunActive(runState);

  const startRun = useCallback(() => {
    const p = parsePlan(planText);
    if (p.kind !== 'ok') return;
    const preset = PLAN_PRESETS.find((x) => formatPlan(x.volts) === formatPlan(p.volts));
    client.send({
      type: 'run-start',
      plan: {
        id: preset?.id ?? 'custom',
        label: preset?.label ?? `Custom: ${formatPlan(p.volts)} V`,
        volts: [...p.volts],
      },
    });
    setResumeOffer(null);
    setTab('run');
    resumeAudio();
  }, [planText, client, resumeAudio]);

  const drive = useDrive({
    client,
    source,
    startWithSim: params.drive === 'sim',
    tab,
    planText,
    pairConfig,
    driftVolts: view.drift?.volts ?? null,
    startRun,
  });

  const sendEvent = useCallback((e: UserRunEvent) => client.send({ type: 'run-event', event: e }), [client]);

  const runRef = useRef<RunState | null>(null);
  runRef.current = runState;
  useEffect(() => {
    const onKey = (e: KeyboardEvent) => {
      const t = e.target as HTMLElement | null;
      if (
        t &&
        (t.tagName === 'INPUT' || t.tagName === 'TEXTAREA' || t.tagName === 'SELECT' || t.isContentEditable)
      )
        return;
      if (e.ctrlKey || e.metaKey || e.altKey) return;
      const s = runRef.current;
      if (!s || tab !== 'run') return;
      const k = e.key.length === 1 ? e.key.toLowerCase() : e.key;
      let ev: UserRunEvent | null = null;
      if (k === RUN_KEYS.captureNow) ev = { type: 'capture-now' };
      else if (k === RUN_KEYS.redo)
        ev = { type: 'redo', stepIndex: s.warning ? s.current : (s.lastCapturedStep ?? s.current) };
      else if (k === RUN_KEYS.skip) ev = { type: 'skip' };
      else if (k === RUN_KEYS.back) ev = { type: 'back' };
      else if (k === RUN_KEYS.pause) ev = { type: s.phase === 'paused' ? 'resume' : 'pause' };
      else if (k === RUN_KEYS.accept && s.warning) ev = { type: 'accept-pitch' };
      if (ev) {
        e.preventDefault();
        sendEvent(ev);
      }
    };
    window.addEventListener('keydown', onKey);
    return () => window.removeEventListener('keydown', onKey);
  }, [sendEvent, tab]);

  // ---- Recording (Open WAV…) -------------------------------------------------------------------
  const [wavPlanProblem, setWavPlanProblem] = useState<string | null>(null);
  const onOpenWav = useCallback(
    async (file: File | null) => {
      if (!file) return;
      setTab('run');
      const p = parsePlan(planText);
      if (p.kind !== 'ok') {
        setWavPlanProblem(
          `${file.name} was not analysed: the plan’s voltages are needed to map the steps (${p.message}).`,
        );
        return;
      }
      setWavPlanProblem(null);
      // The File itself goes to the worker, which reads it in slices: a recording of any length.
      client.send({
        type: 'wav-analyze',
        file,
        fileName: file.name,
        request: {
          points: [...p.volts],
          channel: channel + 1,
          settleSeconds: RECORDING_SETTLE_SECONDS,
          a4Hz: A4_HZ,
          clockPpm: setup.clockPpm,
          ...(setup.fitFromVolts === undefined ? {} : { fitFromVolts: setup.fitFromVolts }),
          ...(setup.fitToVolts === undefined ? {} : { fitToVolts: setup.fitToVolts }),
          ...(setup.network === undefined ? {} : { network: setup.network }),
        },
      });
    },
    [client, planText, channel, setup],
  );
  useEffect(
    () =>
      client.onMessage((m) => {
        if (m.type === 'wav-done' && m.outcome.kind === 'ok') setShowRecording(true);
      }),
    [client],
  );
  const wavOk =
    view.wav?.outcome?.kind === 'ok' ? { fileName: view.wav.fileName, ...view.wav.outcome } : null;
  const recordingView = showRecording && wavOk ? wavOk : null;
  const recordingAnalysis = useMemo(
    () => (wavOk ? recordingAsRunAnalysis(wavOk.analysis) : null),
    [wavOk?.analysis],
  );
  /** What the unit book, the exports and the printed report work on: the recording shown, else the run. */
  const shownAnalysis = recordingView ? recordingAnalysis : analysis;
  const shownPlanVolts = recordingView
    ? recordingView.analysis.steps.map((s) => s.volts ?? 0)
    : (runState?.plan.volts ?? []);
  /** What a save stores: the one result of the recording shown, else of the run (when it is a run). */
  const recordResult = useMemo((): CalibrationResult | null => {
    const r = shownAnalysis?.result ?? null;
    return r && isRunResult(r) ? r : null;
  }, [shownAnalysis]);

  const doExport = useCallback(
    async (format: 'csv' | 'json') => {
      const a = shownAnalysis;
      if (!a) return;
      // The one slug of a unit name (main/record-id.ts): 'Crème VCO' → 'creme-vco' for ids and file names alike.
      const name = `${slugify(info.unitName || info.serial || 'spanmeter run')}-${new Date().toISOString().slice(0, 10)}`;
      const rt = Number(info.roomTempC);
      const content =
        format === 'csv'
          ? runToCsv(a, {
              unitName: info.unitName,
              serial: info.serial,
              notes: info.notes,
              meterUsed: info.meterUsed,
              takenAt: new Date().toISOString(),
              ...(info.roomTempC.trim() !== '' && Number.isFinite(rt) ? { roomTempC: rt } : {}),
            })
          : // One JSON shape: the command line's (`spanmeter analyze --json`), the record's.
            resultToJsonText(a.result);
      const r = await store.exportFile({ format, suggestedName: name, content });
      setExportMsg(
        r.ok
          ? r.value.kind === 'saved'
            ? `Exported ${r.value.fileName}.`
            : 'Export cancelled.'
          : r.error.message,
      );
    },
    [shownAnalysis, info, store],
  );

  const wavStatus = useMemo((): { kind: 'info' | 'error'; text: string } | null => {
    if (wavPlanProblem) return { kind: 'error', text: wavPlanProblem };
    const w = view.wav;
    if (!w) return null;
    const o = w.outcome;
    if (!o) return { kind: 'info', text: `Analysing ${w.fileName}…` };
    if (o.kind === 'ok') {
      const n = o.analysis.steps.length;
      return {
        kind: 'info',
        text: `${w.fileName}: ${o.file.durationSeconds.toFixed(1)} s at ${o.file.sampleRateHz} Hz, channel ${o.file.channelNumber} of ${o.file.channelCount}: ${n} step${n === 1 ? '' : 's'} measured.`,
      };
    }
    const hint =
      o.code === 'plateau-count-mismatch'
        ? ' Set the plan’s voltages to the ones the recording steps through, then open it again.'
        : '';
    return { kind: 'error', text: `${w.fileName} gave no analysis: ${o.message}.${hint}` };
  }, [view.wav, wavPlanProblem]);
  const runKeptNote =
    wavStatus?.kind === 'error' && runState
      ? ` Your run is kept${runState.phase === 'paused' ? ' (paused: press Resume to go on)' : ''}.`
      : '';
  // Shown while the run it paused is still waiting; the rate readout shows the new rate in any case.
  const rateMsg =
    view.rateChange?.runRebased && runState?.phase === 'paused'
      ? {
          kind: 'warn' as const,
          text: `The sample rate changed from ${view.rateChange.fromHz.toLocaleString('en-US')} Hz to ${view.rateChange.toHz.toLocaleString('en-US')} Hz. The run is kept with its captured steps and paused on the new stream: press Resume to go on.`,
        }
      : null;

  const stats = view.stats;
  return (
    <>
      <div className="app">
        <header className="topbar">
          <div className="brand">
            <svg className="logo" viewBox="0 0 32 32" width="24" height="24" aria-hidden="true">
              <path
                d="M5 25 L11 19 L17 13 L23 7"
                stroke="currentColor"
                strokeWidth="3"
                fill="none"
                strokeLinecap="round"
              />
              <circle cx="5" cy="25" r="2.6" fill="#9ab8ff" />
              <circle cx="14" cy="16" r="2.6" fill="#9ab8ff" />
              <circle cx="23" cy="7" r="2.6" fill="#9ab8ff" />
            </svg>
            Spanmeter
          </div>
          <nav className="tabs" role="tablist">
            {TABS.map((t) => (
              <button
                key={t.id}
                role="tab"
                aria-selected={tab === t.id}
                className={tab === t.id ? 'on' : ''}
                onClick={() => setTab(t.id)}
                data-testid={`tab-${t.id}`}
              >
                {t.label}
              </button>
            ))}
          </nav>
          <div className="status" data-testid="engine-stats">
            <span>
              {view.source.kind === 'sim' ? 'Simulator' : view.source.kind === 'live' ? 'Input' : 'No input'}
            </span>
            <span>{formatClock(view.streamSeconds)}</span>
            <span
              data-testid="engine-load"
              data-load-percent={stats ? stats.loadPercent.toFixed(2) : ''}
              data-sim-load-percent={stats ? stats.simLoadPercent.toFixed(2) : ''}
              data-max-capture-ms={stats ? stats.maxCaptureMs.toFixed(1) : ''}
              data-rate={stats ? String(stats.sampleRateHz) : ''}
            >
              engine {stats ? `${stats.loadPercent.toFixed(1)} %` : '—'}
            </span>
            {stats && stats.droppedBlocks > 0 && (
              <span className="warn-text">{stats.droppedBlocks} blocks dropped</span>
            )}
            <FrameMeter />
          </div>
        </header>
        <main className="layout">
          <div className="left">
            <LiveReadout
              reading={view.reading}
              settled={view.settled}
              streamSeconds={view.streamSeconds}
              clockPpm={setup.clockPpm}
            />
            <section className="panel strip-panel">
              <StripChart history={view.history} now={view.streamSeconds} />
            </section>
            <InputPanel
              source={source}
              onSource={setSource}
              devices={devices}
              deviceId={deviceId}
              onDevice={setDeviceId}
              channel={channel}
              channelCount={channelCount}
              onChannel={setChannel}
              sampleRateHz={view.source.sampleRateHz}
              message={
                inputMsg?.kind === 'error' && active
                  ? { ...inputMsg, text: `${inputMsg.text} ${RUN_KEPT}` }
                  : (inputMsg ?? rateMsg)
              }
              onReopen={inputClosed ? () => setInputAttempt((n) => n + 1) : null}
              suspended={suspended && source === 'device'}
              onResumeAudio={resumeAudio}
              reading={view.reading}
              sim={sim}
              onSim={setSim}
              simVolts={view.simVolts}
              onSimVolts={(v) => client.send({ type: 'sim-volts', volts: v, glideSeconds: 0.05 })}
              runDrivesSim={active && tab === 'run'}
            />
            <DrivePanel api={drive} />
          </div>
          <div className="right panel">
            {autosaveStatus.kind === 'failed' && (
              <p className="message error" role="alert" data-testid="autosave-failed">
                {autosaveStatus.message}
              </p>
            )}
            {view.lastError && (
              <p className="message error" role="alert">
                {view.lastError}
              </p>
            )}
            <HandsOffPanel api={drive} tab={tab} />
            {tab === 'run' && recordingView && recordingAnalysis && (
              <RecordingPanel
                fileName={recordingView.fileName}
                file={recordingView.file}
                recording={recordingView.analysis}
                analysis={recordingAnalysis}
                onBackToRun={runState ? () => setShowRecording(false) : null}
                onClose={() => setShowRecording(false)}
                openWav={<OpenWavControl onOpenWav={(f) => void onOpenWav(f)} />}
              />
            )}
            {tab === 'run' && !recordingView && (
              <RunPanel
                run={run}
                analysis={analysis}
                planText={planText}
                onPlanText={setPlanText}
                onStart={startRun}
                onEvent={sendEvent}
                onClose={() => {
                  client.send({ type: 'run-close' });
                  void runAutosave.clear(() => store.clearAutosave());
                }}
                simulated={source === 'sim'}
                resumeOffer={
                  resumeOffer && !runState
                    ? {
                        text: resumeOffer.text,
                        onResume: () => {
                          client.send({ type: 'run-restore', state: resumeOffer.state });
                          setResumeOffer(null);
                        },
                        onDiscard: () => {
                          void runAutosave.clear(() => store.clearAutosave());
                          setResumeOffer(null);
                        },
                      }
                    : null
                }
                onOpenWav={(f) => void onOpenWav(f)}
                wavStatus={wavStatus && { ...wavStatus, text: wavStatus.text + runKeptNote }}
                setup={
                  <SetupPanel
                    form={setupForm}
                    onForm={setSetupForm}
                    problems={setup.problems}
                    reading={view.reading}
                    settled={view.settled}
                  />
                }
              />
            )}
            {tab === 'pair' && (
              <TwoPointPanel
                view={view.twoPoint}
                config={pairConfig}
                onConfig={setPairConfig}
                onReset={() => client.send({ type: 'two-point-reset' })}
                simulated={source === 'sim'}
              />
            )}
            {tab === 'drift' && (
              <DriftPanel
                view={view.drift}
                onStart={(v, w) => client.send({ type: 'drift-start', volts: v, windowSeconds: w })}
                onStop={() => client.send({ type: 'drift-stop' })}
                keeper={driftKeeper}
                simulated={source === 'sim'}
              />
            )}
            {tab === 'book' && (
              <RecordsPanel
                store={store}
                info={info}
                onInfo={setInfo}
                result={recordResult}
                planVolts={shownPlanVolts}
                onExport={(f) => void doExport(f)}
                onPrint={() => window.print()}
                onSaved={() => void runAutosave.clear(() => store.clearAutosave())}
                openRecord={openRecord}
                onOpenRecord={setOpenRecord}
              />
            )}
            {exportMsg && tab === 'book' && <p className="message info">{exportMsg}</p>}
          </div>
        </main>
      </div>
      <PrintReport analysis={shownAnalysis} info={info} planVolts={shownPlanVolts} />
    </>
  );
}
