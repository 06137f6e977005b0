/**
 * Spanmeter's window: the input and live reading on the left, the work on the right (a guided run, the
 * scale pair, the drift hold, the unit book), a top bar with the engine's status, and the bench view.
 * State the engine owns arrives through {@link EngineClient}; the input, the autosave, the run's keys and
 * the recording each live in a hook of their own (hooks/); this component wires them together and holds
 * only what the user chose.
 */
import { useCallback, useEffect, useMemo, useState, useSyncExternalStore } from 'react';
import { A4_HZ } from '../../dsp/notes.ts';
import { PLAN_PRESETS, formatPlan, parsePlan, presetPlan } from '../../dsp/plan.ts';
import { recordingToRecordResult } from '../../dsp/recording.ts';
import type { RunState } from '../../dsp/run.ts';
import type { AnalysisResult, UnitRecord } from '../../main/api-types.ts';
import { EngineClient } from './engine/client.ts';
import type { EngineMode, TwoPointConfig, UserRunEvent } from './engine/protocol.ts';
import { useAudioInput } from './hooks/useAudioInput.ts';
import { useCaptureSignal, type CaptureSignal } from './hooks/useCaptureSignal.ts';
import { pageStorage } from './hooks/pageStorage.ts';
import { capturedCount, useRunAutosave, type RunSource } from './hooks/useRunAutosave.ts';
import { useRunKeys } from './hooks/useRunKeys.ts';
import { useTheme } from './hooks/useTheme.ts';
import { useWavAnalysis } from './hooks/useWavAnalysis.ts';
import { analyzeRun, recordingAsRunAnalysis, toAnalysisResult } from './lib/analysis.ts';
import { numberOrNull } from './lib/fields.ts';
import { formatHz, formatVolts } from './lib/format.ts';
import { parseStartupParams } from './lib/params.ts';
import { loadSetup, saveSetup, setupOptions, type SetupForm } from './lib/setup.ts';
import { simSettingsForUnit } from './lib/sim-settings.ts';
import { pickStore } from './storage/store.ts';
import { BenchView } from './ui/BenchView.tsx';
import { StripChart } from './ui/charts.tsx';
import { DriftPanel } from './ui/DriftPanel.tsx';
import { InputPanel } from './ui/InputPanel.tsx';
import { LiveReadout } from './ui/LiveReadout.tsx';
import { PrintReport } from './ui/PrintReport.tsx';
import { EMPTY_UNIT_INFO, RecordsPanel, UNIT_RULES, type UnitInfo } from './ui/RecordsPanel.tsx';
import { RecordingPanel } from './ui/RecordingPanel.tsx';
import {
  DEFAULT_TOLERANCE_CENTS,
  SOFTWARE_VERSION,
  reportFileName,
  reportToCsv,
  reportToJson,
  resultFromAnalysis,
  type RunReport,
} from './ui/results/index.ts';
import { OpenWavControl, RunPanel } from './ui/RunPanel.tsx';
import { SetupPanel } from './ui/SetupPanel.tsx';
import { TopBar, type Tab } from './ui/TopBar.tsx';
import { TwoPointPanel } from './ui/TwoPointPanel.tsx';

function modeFor(tab: Tab): EngineMode {
  return tab === 'pair' ? 'two-point' : tab === 'drift' ? 'drift' : 'run';
}

/** Said wherever a fault stops the input while a run is in progress. */
const RUN_KEPT = 'The run is kept with its captured steps, paused: press Resume once the input is back.';

/** How far the first step may be from the same voltage in the unit's last run and count as known, cents. */
const FIRST_STEP_MATCH_CENTS = 150;

export function App() {
  const params = useMemo(() => parseStartupParams(window.location.search), []);
  const client = useMemo(() => new EngineClient(), []);
  const view = useSyncExternalStore(client.subscribe, client.getView);
  const store = useMemo(() => pickStore(), []);
  const audio = useAudioInput(client, params);
  const [theme, setTheme] = useTheme();

  const [planText, setPlanText] = useState(params.planText ?? formatPlan(presetPlan().volts));
  const [tab, setTab] = useState<Tab>('run');
  const [info, setInfo] = useState<UnitInfo>(EMPTY_UNIT_INFO);
  const [pairConfig, setPairConfig] = useState<TwoPointConfig>({
    voltsLow: 1,
    voltsHigh: 3,
    toleranceCents: 1,
    alternateSeconds: 3,
  });
  const [exportMsg, setExportMsg] = useState<string | null>(null);
  const [openRecord, setOpenRecord] = useState<UnitRecord | null>(null);
  const [printReport, setPrintReport] = useState<RunReport | null>(null);
  const [bench, setBench] = useState(false);
  /** The run as it was before a Close, Redo or Restart, to put back with Undo. */
  const [undo, setUndo] = useState<{ text: string; state: RunState } | null>(null);
  /** The run whose first step the user has confirmed (by its plan and first capture). */
  const [firstConfirmed, setFirstConfirmed] = useState<string | null>(null);
  /** Wall-clock time of the current run's first capture, ISO 8601. */
  const [runTakenAt, setRunTakenAt] = useState<string | null>(null);
  /** The Span run's Setup (clock correction, fit range and input network), kept between sessions. */
  const [setupForm, setSetupForm] = useState<SetupForm>(() => loadSetup(pageStorage()));
  const setup = useMemo(() => setupOptions(setupForm), [setupForm]);
  useEffect(() => saveSetup(pageStorage(), setupForm), [setupForm]);

  // ---- Modes ---------------------------------------------------------------------------------
  useEffect(() => {
    client.send({ type: 'mode', mode: modeFor(tab) });
  }, [tab, client]);

  useEffect(() => {
    client.send({ type: 'two-point-config', config: pairConfig });
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
  const captureKey = runState
    ? JSON.stringify(
        runState.steps.map((s) => [
          s.capture?.hz ?? null,
          s.capture?.uncertaintyCents ?? null,
          s.measuredVolts,
        ]),
      )
    : '';
  // Recomputed only when a capture or a meter reading changes, not on every reading.
  const analysis = useMemo(() => (runState ? analyzeRun(runState, A4_HZ, setup) : null), [captureKey, setup]);
  const active = runState !== null && runState.phase !== 'finished' && runState.phase !== 'aborted';
  const captured = runState ? capturedCount(runState) : 0;
  const capture = useCaptureSignal(runState);

  useEffect(() => {
    if (captured === 0) setRunTakenAt(null);
    else setRunTakenAt((t) => t ?? new Date().toISOString());
  }, [captured]);

  const sendEvent = useCallback((e: UserRunEvent) => client.send({ type: 'run-event', event: e }), [client]);

  /** Sends a run event that drops a capture, keeping the run as it was for Undo. */
  const sendWithUndo = useCallback(
    (e: UserRunEvent) => {
      if (runState && e.type === 'redo' && runState.steps[e.stepIndex]?.capture) {
        setUndo({ text: `Step ${e.stepIndex + 1} is being measured again.`, state: runState });
      }
      sendEvent(e);
    },
    [runState, sendEvent],
  );

  const startRun = useCallback(() => {
    const p = parsePlan(planText);
    if (p.kind !== 'ok') return;
    if (runState && capturedCount(runState) > 0) {
      setUndo({
        text: `The previous run (${capturedCount(runState)} captured steps) was replaced.`,
        state: runState,
      });
    }
    const preset = PLAN_PRESETS.find((x) => formatPlan(x.volts) === formatPlan(p.volts));
    client.send({
      type: 'run-start',
      plan: {
        id: preset?.id ?? 'custom',
        label: preset?.label ?? `Custom: ${formatPlan(p.volts)} V`,
        volts: [...p.volts],
      },
    });
    setFirstConfirmed(null);
    setRunTakenAt(null);
    autosave.dismiss();
    setTab('run');
    audio.resumeAudio();
  }, [planText, client, audio, runState, autosave]);

  const closeRun = useCallback(() => {
    if (runState && capturedCount(runState) > 0) {
      setUndo({ text: `Run closed with ${capturedCount(runState)} captured steps.`, state: runState });
    } else void store.clearAutosave();
    client.send({ type: 'run-close' });
  }, [runState, client, store]);

  const doUndo = useCallback(() => {
    if (!undo) return;
    client.send({ type: 'run-restore', state: undo.state });
    setUndo(null);
  }, [undo, client]);

  // ---- First step: confirmed against what is known ---------------------------------------------
  const first = runState?.steps[0] ?? null;
  const firstKey = runState && first?.capture ? `${runState.plan.volts.join(',')}@${first.capture.hz}` : null;
  const knownFirst = useMemo(() => {
    if (!first?.capture || !openRecord) return null;
    const last = openRecord.runs.at(-1);
    const same = last?.result.steps.find((s) => Math.abs(s.volts - first.nominalVolts) < 1e-6);
    if (!same) return null;
    const cents = 1200 * Math.log2(first.capture.hz / same.hz);
    return { cents, label: last?.label ?? 'last run' };
  }, [first, openRecord]);
  const firstNeedsAnswer =
    audio.source === 'device' &&
    firstKey !== null &&
    firstConfirmed !== firstKey &&
    !(knownFirst && Math.abs(knownFirst.cents) <= FIRST_STEP_MATCH_CENTS);
  const confirmFirst = useCallback(() => setFirstConfirmed(firstKey), [firstKey]);

  useRunKeys(runState, tab === 'run' && !bench, sendWithUndo, (key) => {
    if (firstNeedsAnswer && key.toLowerCase() === 'y') {
      confirmFirst();
      return true;
    }
    return false;
  });

  // ---- Recording (Open WAV…) -------------------------------------------------------------------
  const wav = useWavAnalysis(client, view, planText, audio.channel, setup);
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
  const recordResult = useMemo((): AnalysisResult | null => {
    if (recordingView) {
      const r = recordingToRecordResult(recordingView.analysis);
      return r ? { steps: [...r.steps], fit: r.fit, advice: r.advice.map((a) => ({ ...a })) } : null;
    }
    return analysis && (analysis.table?.rows.length ?? 0) > 0 ? toAnalysisResult(analysis) : null;
  }, [recordingView, analysis]);

  const liveReport = useMemo((): RunReport | null => {
    if (!shownAnalysis || (shownAnalysis.table?.rows.length ?? 0) === 0) return null;
    return {
      result: resultFromAnalysis(shownAnalysis),
      unitName: info.unitName.trim() || info.serial.trim(),
      serial: info.serial.trim() || null,
      label: recordingView ? recordingView.fileName : 'not saved',
      takenAt: recordingView ? null : runTakenAt,
      roomTempC: numberOrNull(info.roomTempC, UNIT_RULES.roomTempC),
      meterUsed: info.meterUsed.trim() || null,
      warmUpMinutes: numberOrNull(info.warmUpMinutes, UNIT_RULES.warmUpMinutes),
      notes: info.notes.trim() || null,
      planVolts: shownPlanVolts,
      toleranceCents: numberOrNull(info.toleranceCents, UNIT_RULES.toleranceCents) ?? DEFAULT_TOLERANCE_CENTS,
      saved: false,
      softwareVersion: SOFTWARE_VERSION,
    };
  }, [shownAnalysis, info, recordingView, runTakenAt, shownPlanVolts]);

  const doExport = useCallback(
    async (report: RunReport, format: 'csv' | 'json') => {
      const content = format === 'csv' ? reportToCsv(report) : reportToJson(report);
      const r = await store.exportFile({ format, suggestedName: reportFileName(report), content });
      setExportMsg(
        r.ok
          ? r.value.kind === 'saved'
            ? `Exported ${r.value.fileName}.`
            : 'Export cancelled.'
          : r.error.message,
      );
    },
    [store],
  );

  const doPrint = useCallback((report: RunReport) => {
    setPrintReport(report);
    // Print once the report has rendered.
    window.setTimeout(() => window.print(), 50);
  }, []);

  /** One click from a piece of advice to the scale pair, with the advised voltages filled in. */
  const checkAdvice = useCallback(
    (trimmer: 'scale' | 'hf') => {
      const a = shownAnalysis ? resultFromAnalysis(shownAnalysis) : null;
      const pair = a?.pairs[trimmer];
      if (!pair) return;
      setPairConfig((c) => ({ ...c, voltsLow: pair.low, voltsHigh: pair.high }));
      setTab('pair');
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

  const firstStepQuestion =
    runState && first?.capture && tab === 'run' ? (
      firstNeedsAnswer ? (
        <div className="warning first-step" role="alert" data-testid="first-step-question">
          <strong>
            Is this {formatVolts(first.nominalVolts)}? Step 1 read {formatHz(first.capture.hz)} Hz.
          </strong>
          <span>
            If the voltage was not {formatVolts(first.nominalVolts)}, every step would be labelled wrong:
            confirm, or redo step 1 with the right voltage.
          </span>
          <button onClick={confirmFirst} data-testid="first-step-yes">
            Yes, it is <kbd>Y</kbd>
          </button>
          <button onClick={() => sendWithUndo({ type: 'redo', stepIndex: 0 })}>Redo step 1</button>
        </div>
      ) : knownFirst && firstKey !== firstConfirmed && audio.source === 'device' ? (
        <p className="message info small" data-testid="first-step-known">
          Step 1 is {knownFirst.cents >= 0 ? '+' : '−'}
          {Math.abs(knownFirst.cents).toFixed(1)} ¢ from the same voltage in “{knownFirst.label}” of{' '}
          {openRecord?.unitName}: the voltage looks right.
        </p>
      ) : null
    ) : null;

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
              settled={view.settled}
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
              channel={audio.channel}
              channelCount={audio.channelCount}
              onChannel={audio.setChannel}
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
            />
          </div>
          <div className="right panel">
            {view.lastError && (
              <p className="message error" role="alert">
                {view.lastError}
              </p>
            )}
            {undo && (
              <div className="banner" role="status" data-testid="undo-banner">
                <span>{undo.text}</span>
                <button onClick={doUndo} data-testid="undo">
                  Undo
                </button>
                <button
                  className="quiet"
                  onClick={() => {
                    setUndo(null);
                    if (!runState) void store.clearAutosave();
                  }}
                >
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
                firstStep={firstStepQuestion}
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
            {tab === 'pair' && (
              <TwoPointPanel
                key={`${pairConfig.voltsLow}-${pairConfig.voltsHigh}-${pairConfig.toleranceCents}`}
                view={view.twoPoint}
                config={pairConfig}
                onConfig={setPairConfig}
                onReset={() => client.send({ type: 'two-point-reset' })}
                simulated={audio.source === 'sim'}
              />
            )}
            {tab === 'drift' && (
              <DriftPanel
                view={view.drift}
                onStart={(v, w) => client.send({ type: 'drift-start', volts: v, windowSeconds: w })}
                onStop={() => client.send({ type: 'drift-stop' })}
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
                liveReport={liveReport}
                onExport={(r, f) => void doExport(r, f)}
                onPrint={doPrint}
                onSaved={() => void store.clearAutosave()}
                openRecord={openRecord}
                onOpenRecord={setOpenRecord}
              />
            )}
            {exportMsg && tab === 'book' && (
              <p className="message info" role="status" data-testid="export-message">
                {exportMsg}
              </p>
            )}
          </div>
        </main>
      </div>
      {bench && (
        <BenchView
          view={view}
          mode={tab === 'pair' ? 'pair' : 'live'}
          pairTolerance={pairConfig.toleranceCents}
          clockPpm={setup.clockPpm}
          run={runState}
          simulated={audio.source === 'sim'}
          flashing={capture.flashing}
          onClose={() => setBench(false)}
        />
      )}
      <PrintReport report={printReport ?? liveReport} />
    </>
  );
}
