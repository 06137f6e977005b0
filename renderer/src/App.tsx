/**
 * Spanmeter's window: the input and live reading on the left, the work on the right (a guided run, the
 * scale pair, the drift hold, the unit book), a top bar with the engine's status, and the bench view.
 * State the engine owns arrives through {@link EngineClient}; the input, the autosave, the run's keys and
 * the recording each live in a hook of their own (hooks/); this component wires them together and holds
 * only what the user chose.
 */
import { useCallback, useEffect, useMemo, useState, useSyncExternalStore } from 'react';
import { A4_HZ } from '../../dsp/math/index.ts';
import { PLAN_PRESETS, formatPlan, parsePlan, presetPlan } from '../../dsp/calibration/index.ts';
import { isRunResult, type CalibrationResult } from '../../dsp/calibration/index.ts';
import { isRunActive } from '../../dsp/calibration/index.ts';
import type { UnitRecord } from '../../main/api-types.ts';
import { EngineClient } from './engine/client.ts';
import type { EngineMode, ScalePairConfig, UserRunEvent } from './engine/protocol.ts';
import { useAudioInput } from './hooks/useAudioInput.ts';
import { useCaptureSignal, type CaptureSignal } from './hooks/useCaptureSignal.ts';
import { useFirstStep } from './hooks/useFirstStep.ts';
import { pageStorage } from './hooks/pageStorage.ts';
import { capturedCount, useRunAutosave, type RunSource } from './hooks/useRunAutosave.ts';
import { useRunKeys } from './hooks/useRunKeys.ts';
import { useRunReports } from './hooks/useRunReports.ts';
import { useRunUndo } from './hooks/useRunUndo.ts';
import { useSettledShown } from './hooks/useSettledShown.ts';
import { useTheme } from './hooks/useTheme.ts';
import { useWavAnalysis } from './hooks/useWavAnalysis.ts';
import { recordingAsRunAnalysis, runAnalysisOf } from './lib/analysis.ts';
import { parseStartupParams } from './lib/params.ts';
import { numberOrNull } from './lib/fields.ts';
import { loadSetup, saveSetup, setupOptions, type SetupForm } from './lib/setup.ts';
import { simSettingsForUnit } from './lib/sim-settings.ts';
import { pickStore } from './storage/store.ts';
import { useDriftKeeper } from './ui/DriftLogBar.tsx';
import { BenchView } from './ui/BenchView.tsx';
import { BookKeeping } from './ui/BookKeeping.tsx';
import { StripChart } from './ui/charts.tsx';
import { DriftPanel } from './ui/DriftPanel.tsx';
import { FirstStepQuestion } from './ui/FirstStepQuestion.tsx';
import { InputPanel } from './ui/InputPanel.tsx';
import { LiveReadout } from './ui/LiveReadout.tsx';
import { PrintReport } from './ui/PrintReport.tsx';
import { EMPTY_UNIT_INFO, RecordsPanel, UNIT_RULES, type UnitInfo } from './ui/RecordsPanel.tsx';
import { RecordingPanel } from './ui/RecordingPanel.tsx';
import { DEFAULT_TOLERANCE_CENTS, resultFromAnalysis } from './ui/results/index.ts';
import { OpenWavControl, RunPanel } from './ui/RunPanel.tsx';
import { SetupPanel } from './ui/SetupPanel.tsx';
import { useDrive } from './drive/use-drive.ts';
import { DrivePanel, HandsOffPanel } from './ui/DrivePanel.tsx';
import { TopBar, type Tab } from './ui/TopBar.tsx';
import { ScalePairPanel } from './ui/ScalePairPanel.tsx';

function modeFor(tab: Tab): EngineMode {
  return tab === 'scale-pair' ? 'scale-pair' : tab === 'drift' ? 'drift' : 'run';
}

/** Said wherever a fault stops the input while a run is in progress. */
const RUN_KEPT = 'The run is kept with its captured steps, paused: press Resume once the input is back.';

export function App() {
  const params = useMemo(() => parseStartupParams(window.location.search), []);
  const client = useMemo(() => new EngineClient(), []);
  // The engine reports every reading; the page redraws at most once a frame, with the latest view, so a
  // burst of readings on a busy machine never queues up renders.
  const subscribeFramed = useMemo(
    () => (notify: () => void) => {
      let frame = 0;
      const stop = client.subscribe(() => {
        if (frame === 0)
          frame = requestAnimationFrame(() => {
            frame = 0;
            notify();
          });
      });
      return () => {
        stop();
        if (frame !== 0) cancelAnimationFrame(frame);
      };
    },
    [client],
  );
  const view = useSyncExternalStore(subscribeFramed, client.getView);
  const store = useMemo(() => pickStore(), []);
  const audio = useAudioInput(client, params);
  const settledShown = useSettledShown(view.settled, view.simVolts, view.streamSeconds);
  const [theme, setTheme] = useTheme();

  const [planText, setPlanText] = useState(params.planText ?? formatPlan(presetPlan().volts));
  const [tab, setTab] = useState<Tab>('run');
  const [info, setInfo] = useState<UnitInfo>(EMPTY_UNIT_INFO);
  const driftKeeper = useDriftKeeper(store, view.drift, info.unitName);
  const [pairConfig, setPairConfig] = useState<ScalePairConfig>({
    voltsLow: 1,
    voltsHigh: 3,
    toleranceCents: 1,
    alternateSeconds: 3,
  });
  const [openRecord, setOpenRecord] = useState<UnitRecord | null>(null);
  const [bench, setBench] = useState(false);
  /** Wall-clock time of the current run's first capture, ISO 8601. */
  const [runTakenAt, setRunTakenAt] = useState<string | null>(null);
  /** The Span run's Setup (clock correction, fit range and input network), kept between sessions. */
  const [setupForm, setSetupForm] = useState<SetupForm>(() => loadSetup(pageStorage()));
  // One tolerance on every screen: the unit's (or the book's default), for the live run, an opened
  // recording, the book and the report alike.
  const unitToleranceCents =
    numberOrNull(info.toleranceCents, UNIT_RULES.toleranceCents) ?? DEFAULT_TOLERANCE_CENTS;
  const setup = useMemo(
    () => ({ ...setupOptions(setupForm), toleranceCents: unitToleranceCents }),
    [setupForm, unitToleranceCents],
  );
  useEffect(() => saveSetup(pageStorage(), setupForm), [setupForm]);

  // ---- Modes ---------------------------------------------------------------------------------
  useEffect(() => {
    client.send({ type: 'mode', mode: modeFor(tab) });
  }, [tab, client]);

  useEffect(() => {
    client.send({ type: 'scale-pair-config', config: pairConfig });
  }, [pairConfig, client]);

  // ---- Autosave and resume -------------------------------------------------------------------
  const currentSource: RunSource =
    audio.source === 'sim' ? { kind: 'sim', unitId: audio.sim.unitId } : { kind: 'device' };
  const { setSource, setSim, sim } = audio;
  const onResumeSource = useCallback(
    (s: RunSource) => {
      setSource(s.kind);
      if (s.kind === 'sim' && s.unitId && s.unitId !== sim.unitId)
        setSim(simSettingsForUnit(s.unitId, sim.sampleRateHz));
    },
    [setSource, setSim, sim.unitId, sim.sampleRateHz],
  );
  const autosave = useRunAutosave(client, store, currentSource, onResumeSource);

  // ---- Run -----------------------------------------------------------------------------------
  const run = view.run;
  const runState = run?.state ?? null;
  // The worker calibrates the run (dsp/calibration/pipeline.ts) with the Setup sent here; the page only shows it.
  useEffect(() => {
    client.send({
      type: 'calibration-setup',
      setup: {
        a4Hz: A4_HZ,
        clockPpm: setup.clockPpm,
        ...(setup.fitFromVolts === undefined ? {} : { fitFromVolts: setup.fitFromVolts }),
        ...(setup.fitToVolts === undefined ? {} : { fitToVolts: setup.fitToVolts }),
        ...(setup.network === undefined ? {} : { network: setup.network }),
        ...(setup.scalePivotVolts === undefined ? {} : { scalePivotVolts: setup.scalePivotVolts }),
        toleranceCents: setup.toleranceCents,
      },
    });
  }, [client, setup]);
  const calibration = run?.calibration ?? null;
  const analysis = useMemo(() => (calibration ? runAnalysisOf(calibration) : null), [calibration]);
  const active = isRunActive(runState);
  const captured = runState ? capturedCount(runState) : 0;
  const capture = useCaptureSignal(runState);

  useEffect(() => {
    if (captured === 0) setRunTakenAt(null);
    else setRunTakenAt((t) => t ?? new Date().toISOString());
  }, [captured]);

  const sendEvent = useCallback((e: UserRunEvent) => client.send({ type: 'run-event', event: e }), [client]);

  const {
    undo,
    sendWithUndo,
    beforeRestart,
    closeRun,
    doUndo,
    dismiss: dismissUndo,
  } = useRunUndo(client, { clearAutosave: autosave.clear }, runState, sendEvent);

  const startRun = useCallback(() => {
    const p = parsePlan(planText);
    if (p.kind !== 'ok') return;
    beforeRestart();
    const preset = PLAN_PRESETS.find((x) => formatPlan(x.volts) === formatPlan(p.volts));
    client.send({
      type: 'run-start',
      plan: {
        id: preset?.id ?? 'custom',
        label: preset?.label ?? `Custom: ${formatPlan(p.volts)} V`,
        volts: [...p.volts],
      },
    });
    setRunTakenAt(null);
    autosave.dismiss();
    setTab('run');
    audio.resumeAudio();
  }, [planText, client, audio, beforeRestart, autosave]);

  const drive = useDrive({
    client,
    source: audio.source,
    startWithSim: params.drive === 'sim',
    tab,
    planText,
    pairConfig,
    driftVolts: view.drift?.volts ?? null,
    startRun,
  });

  // ---- First step: confirmed against what is known ---------------------------------------------
  const first = useFirstStep(
    runState,
    audio.source === 'device' && !drive.handsOff.active,
    openRecord,
    sendEvent,
    sendWithUndo,
  );

  useRunKeys(runState, tab === 'run' && !bench, sendWithUndo, (key) => {
    if (first.needsAnswer && key.toLowerCase() === 'y') {
      first.confirm();
      return true;
    }
    return false;
  });

  // ---- Recording (Open WAV…) -------------------------------------------------------------------
  const wav = useWavAnalysis(client, view, planText, audio.channelIndex, setup);
  const onOpenWav = useCallback(
    (f: File | null) => {
      if (f) setTab('run');
      void wav.openWav(f);
    },
    [wav],
  );
  const wavOk = wav.wavOk;
  const recordingView = wav.recordingView;
  const recordingAnalysis = useMemo(
    () => (wavOk ? recordingAsRunAnalysis(wavOk.analysis) : null),
    [wavOk?.analysis],
  );
  /** What the unit book and the live exports work on: the recording shown, else the run. */
  const shownAnalysis = recordingView ? recordingAnalysis : analysis;
  const shownPlanVolts = recordingView
    ? recordingView.analysis.steps.map((s) => s.volts ?? 0)
    : (runState?.plan.volts ?? []);
  /** What a save stores: the one result of the recording shown, else of the run (when it is a run). */
  const recordResult = useMemo((): CalibrationResult | null => {
    const r = shownAnalysis?.result ?? null;
    return r && isRunResult(r) ? r : null;
  }, [shownAnalysis]);

  const reports = useRunReports(
    store,
    shownAnalysis,
    info,
    recordingView ? recordingView.fileName : 'not saved',
    recordingView ? null : runTakenAt,
    shownPlanVolts,
  );

  /** One click from a piece of advice to the scale pair, with the advised voltages filled in. */
  const checkAdvice = useCallback(
    (trimmer: 'scale' | 'hf') => {
      const a = shownAnalysis ? resultFromAnalysis(shownAnalysis) : null;
      const pair = a?.pairs[trimmer];
      if (!pair) return;
      setPairConfig((c) => ({ ...c, voltsLow: pair.low, voltsHigh: pair.high }));
      setTab('scale-pair');
    },
    [shownAnalysis],
  );

  const runKeptNote =
    wav.status?.kind === 'error' && runState
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

  const inputMessage =
    audio.message?.kind === 'error' && active
      ? { ...audio.message, text: `${audio.message.text} ${RUN_KEPT}` }
      : (audio.message ?? rateMsg);

  return (
    <>
      <div className={`app ${capture.flashing ? 'flash' : ''}`}>
        <TopBar
          view={view}
          tab={tab}
          onTab={setTab}
          theme={theme}
          onTheme={setTheme}
          onBenchView={() => setBench(true)}
        />
        <main className="layout">
          <div className="left">
            <LiveReadout
              reading={view.reading}
              settled={settledShown}
              streamSeconds={view.streamSeconds}
              clockPpm={setup.clockPpm}
            />
            <section className="panel strip-panel" aria-label="Pitch over the last seconds">
              <StripChart history={view.history} now={view.streamSeconds} />
            </section>
            <InputPanel
              source={audio.source}
              onSource={audio.setSource}
              devices={audio.devices}
              deviceId={audio.deviceId}
              onDevice={audio.setDeviceId}
              channelIndex={audio.channelIndex}
              channelCount={audio.channelCount}
              onChannelIndex={audio.setChannelIndex}
              sampleRateHz={view.source.sampleRateHz}
              message={inputMessage}
              onReopen={audio.closed ? audio.reopen : null}
              suspended={audio.suspended}
              onResumeAudio={audio.resumeAudio}
              reading={view.reading}
              sim={audio.sim}
              onSim={audio.setSim}
              simVolts={view.simVolts}
              onSimVolts={(v) => client.send({ type: 'sim-volts', volts: v, glideSeconds: 0.05 })}
              runDrivesSim={active && tab === 'run'}
              simPace={params.simPace}
            />
            <DrivePanel api={drive} />
          </div>
          <div className="right panel">
            {autosave.status.kind === 'failed' && (
              <p className="message error" role="alert" data-testid="autosave-failed">
                {autosave.status.message}
              </p>
            )}
            {view.lastError && (
              <p className="message error" role="alert">
                {view.lastError}
              </p>
            )}
            <HandsOffPanel api={drive} tab={tab} />
            {undo && (
              <div className="banner" role="status" data-testid="undo-banner">
                <span>{undo.text}</span>
                <button onClick={doUndo} data-testid="undo">
                  Undo
                </button>
                <button className="quiet" onClick={dismissUndo}>
                  Dismiss
                </button>
              </div>
            )}
            {tab === 'run' && recordingView && recordingAnalysis && (
              <RecordingPanel
                fileName={recordingView.fileName}
                file={recordingView.file}
                recording={recordingView.analysis}
                analysis={recordingAnalysis}
                onBackToRun={runState ? () => wav.setShowRecording(false) : null}
                onClose={() => wav.setShowRecording(false)}
                openWav={<OpenWavControl onOpenWav={onOpenWav} />}
                onCheckAdvice={checkAdvice}
              />
            )}
            {tab === 'run' && !recordingView && (
              <RunPanel
                run={run}
                analysis={analysis}
                planText={planText}
                onPlanText={setPlanText}
                onStart={startRun}
                onEvent={sendWithUndo}
                onClose={closeRun}
                simulated={audio.source === 'sim'}
                resumeOffer={
                  autosave.offer && !runState
                    ? { text: autosave.offer.text, onResume: autosave.resume, onDiscard: autosave.discard }
                    : null
                }
                onOpenWav={onOpenWav}
                wavStatus={wav.status && { ...wav.status, text: wav.status.text + runKeptNote }}
                firstStep={<FirstStepQuestion first={first} />}
                firstStepHeld={first.holding}
                onCheckAdvice={checkAdvice}
                onBenchView={() => setBench(true)}
                setup={
                  <SetupPanel
                    form={setupForm}
                    onForm={setSetupForm}
                    problems={setup.problems}
                    reading={view.reading}
                    settled={view.settled}
                    captureSignal={capture.signal}
                    onCaptureSignal={(s: CaptureSignal) => capture.setSignal(s)}
                  />
                }
              />
            )}
            {tab === 'scale-pair' && (
              <ScalePairPanel
                key={`${pairConfig.voltsLow}-${pairConfig.voltsHigh}-${pairConfig.toleranceCents}`}
                view={view.scalePair}
                config={pairConfig}
                onConfig={setPairConfig}
                onReset={() => client.send({ type: 'scale-pair-reset' })}
                onUsePivot={(volts) => setSetupForm((f) => ({ ...f, scalePivotVolts: String(volts) }))}
                simulated={audio.source === 'sim'}
              />
            )}
            {tab === 'drift' && (
              <DriftPanel
                view={view.drift}
                onStart={(v, w) => client.send({ type: 'drift-start', volts: v, windowSeconds: w })}
                onStop={() => client.send({ type: 'drift-stop' })}
                keeper={driftKeeper}
                simulated={audio.source === 'sim'}
              />
            )}
            {tab === 'book' && (
              <RecordsPanel
                store={store}
                info={info}
                onInfo={setInfo}
                result={recordResult}
                planVolts={shownPlanVolts}
                liveReport={reports.liveReport}
                onExport={(r, f) => void reports.doExport(r, f)}
                onPrint={reports.doPrint}
                onSaved={autosave.clear}
                openRecord={openRecord}
                onOpenRecord={setOpenRecord}
                tools={({ onChanged, refreshKey }) => (
                  <BookKeeping
                    store={store}
                    openRecord={openRecord}
                    onOpenRecord={setOpenRecord}
                    onChanged={onChanged}
                    refreshKey={refreshKey}
                  />
                )}
              />
            )}
            {reports.exportMsg && tab === 'book' && (
              <p className="message info" role="status" data-testid="export-message">
                {reports.exportMsg}
              </p>
            )}
          </div>
        </main>
      </div>
      {bench && (
        <BenchView
          view={view}
          mode={tab === 'scale-pair' ? 'scale-pair' : 'live'}
          pairTolerance={pairConfig.toleranceCents}
          clockPpm={setup.clockPpm}
          run={runState}
          simulated={audio.source === 'sim'}
          flashing={capture.flashing}
          onClose={() => setBench(false)}
        />
      )}
      <PrintReport report={reports.printReport} />
    </>
  );
}
