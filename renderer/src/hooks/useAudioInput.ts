/**
 * The audio source the user chose (a sound-card input or the simulated oscillator), opened and kept open:
 * device list, channel, suspended audio context, and the one-line message when the input fails or goes
 * away. The engine hears about every change through the {@link EngineClient}.
 */
import { useCallback, useEffect, useRef, useState } from 'react';
import { listInputs, openInput, type InputDevice, type OpenInput } from '../audio/input.ts';
import type { EngineClient } from '../engine/client.ts';
import type { StartupParams } from '../lib/params.ts';
import { DEFAULT_SIM_UNIT, simOptions, simSettingsForUnit, type SimSettings } from '../lib/sim-settings.ts';

/** Which source feeds the engine. */
export type SourceKind = 'device' | 'sim';

/** A message about the input, shown in the input panel. */
export interface InputMessage {
  readonly kind: 'info' | 'warn' | 'error';
  readonly text: string;
}

/** What {@link useAudioInput} gives the window. */
export interface AudioInput {
  source: SourceKind;
  setSource(s: SourceKind): void;
  devices: InputDevice[];
  deviceId: string | null;
  setDeviceId(id: string | null): void;
  /** The input channel analysed, 0-based (the picker shows it from 1). */
  channelIndex: number;
  setChannelIndex(i: number): void;
  channelCount: number;
  message: InputMessage | null;
  suspended: boolean;
  /** Whether the input failed and "Open the input again" should be offered. */
  closed: boolean;
  reopen(): void;
  resumeAudio(): void;
  sim: SimSettings;
  setSim(s: SimSettings): void;
}

/**
 * Opens and follows the chosen input.
 *
 * @param client - The engine.
 * @param params - Startup parameters (the first source, demo unit, sample rate, problems to report).
 */
export function useAudioInput(client: EngineClient, params: StartupParams): AudioInput {
  const startupWarning: InputMessage | null =
    params.problems.length > 0 ? { kind: 'warn', text: params.problems.join(' ') } : null;
  const [source, setSource] = useState<SourceKind>(params.input);
  const [devices, setDevices] = useState<InputDevice[]>([]);
  const [deviceId, setDeviceId] = useState<string | null>(null);
  const [channelIndex, setChannelIndex] = useState(0);
  const [channelCount, setChannelCount] = useState(1);
  const [message, setMessage] = useState<InputMessage | null>(startupWarning);
  const [suspended, setSuspended] = useState(false);
  const inputRef = useRef<OpenInput | null>(null);
  const [sim, setSim] = useState<SimSettings>(() =>
    simSettingsForUnit(params.unitId ?? DEFAULT_SIM_UNIT, params.simRateHz ?? 48_000),
  );
  /** Bumped by "Open the input again" to reopen the audio input after a failure. */
  const [attempt, setAttempt] = useState(0);
  const [closed, setClosed] = useState(false);

  const inputGone = useCallback(
    (why: string) => {
      inputRef.current?.close();
      inputRef.current = null;
      client.send({ type: 'source-stop', reason: why });
      setClosed(true);
      setMessage({ kind: 'error', text: `${why} Reconnect the interface and press “Open the input again”.` });
    },
    [client],
  );

  useEffect(() => {
    let cancelled = false;
    inputRef.current?.close();
    inputRef.current = null;
    if (source === 'sim') {
      client.send({
        type: 'source-sim',
        sampleRateHz: sim.sampleRateHz,
        options: simOptions(sim),
        volts: 0,
        pace: params.simPace,
      });
      setSuspended(false);
      setClosed(false);
      return;
    }
    void (async () => {
      const r = await openInput({
        deviceId,
        channelIndex,
        connectEngine: (port, rate) => client.send({ type: 'source-live', sampleRateHz: rate, port }, [port]),
        onChannels: (n) => setChannelCount(n),
        onEnded: () => inputGone('The audio input stopped (unplugged or taken by the system).'),
      });
      if (cancelled) {
        if (r.ok) r.input.close();
        return;
      }
      if (!r.ok) {
        setMessage({ kind: 'error', text: r.failure.message });
        setClosed(true);
        client.send({ type: 'source-stop', reason: r.failure.kind });
        return;
      }
      inputRef.current = r.input;
      setClosed(false);
      setMessage(startupWarning);
      const ctx = r.input.context;
      setSuspended(ctx.state === 'suspended');
      ctx.onstatechange = () => setSuspended(ctx.state === 'suspended');
      setDevices(await listInputs());
    })();
    return () => {
      cancelled = true;
    };
    // The sim's knobs are sent separately below; only its sample rate restarts the source.
  }, [source, deviceId, sim.sampleRateHz, client, inputGone, attempt, params.simPace]);

  useEffect(() => {
    if (source === 'sim') client.send({ type: 'sim-options', options: simOptions(sim) });
  }, [sim, source, client]);

  useEffect(() => {
    inputRef.current?.setChannelIndex(channelIndex);
  }, [channelIndex]);

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

  // Browsers start audio only after a user gesture: any click or key resumes it.
  useEffect(() => {
    const f = () => resumeAudio();
    window.addEventListener('pointerdown', f);
    window.addEventListener('keydown', f);
    return () => {
      window.removeEventListener('pointerdown', f);
      window.removeEventListener('keydown', f);
    };
  }, [resumeAudio]);

  return {
    source,
    setSource,
    devices,
    deviceId,
    setDeviceId,
    channelIndex,
    setChannelIndex,
    channelCount,
    message,
    suspended: suspended && source === 'device',
    closed,
    reopen: () => setAttempt((n) => n + 1),
    resumeAudio,
    sim,
    setSim,
  };
}
