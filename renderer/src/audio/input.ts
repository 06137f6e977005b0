/**
 * Audio input on the page's side: asks for the device with the browser's voice processing turned off,
 * builds the Web Audio graph (source → capture worklet) and hands the worklet's output port to the
 * engine worker. No samples pass through the page's thread.
 */
import workletUrl from './capture.worklet.ts?worker&url';
import type { FromWorklet, ToWorklet } from '../engine/protocol.ts';

/** An audio input the browser lists. */
export interface InputDevice {
  readonly deviceId: string;
  readonly label: string;
}

/** Why the input could not be opened. */
export type InputFailure =
  | { readonly kind: 'permission-denied'; readonly message: string }
  | { readonly kind: 'no-device'; readonly message: string }
  | { readonly kind: 'busy'; readonly message: string }
  | { readonly kind: 'unsupported'; readonly message: string }
  | { readonly kind: 'other'; readonly message: string };

/** An open input. */
export interface OpenInput {
  readonly deviceId: string;
  readonly label: string;
  /** Sample rate of the AudioContext (the device's own rate when the browser allows it), Hz. */
  readonly sampleRateHz: number;
  /** What the browser reports for the track: channel count and the processing flags. */
  readonly settings: MediaTrackSettings;
  readonly context: AudioContext;
  /** Picks the channel the worklet passes on (0-based). */
  setChannelIndex(channelIndex: number): void;
  /** Resumes the AudioContext (browsers start it suspended until the user interacts). */
  resume(): Promise<void>;
  /** Stops the tracks and closes the context. */
  close(): void;
}

/** Name the capture worklet registers (see capture.worklet.ts). */
const PROCESSOR_NAME = 'spanmeter-capture';

/** Frames per block the worklet sends: 2048 (43 ms at 48 kHz). */
const BLOCK_FRAMES = 2048;

/**
 * The audio inputs. Labels are empty until permission has been granted once.
 *
 * @example (await listInputs())[0] // { deviceId: 'default', label: 'Default — USB interface' }
 */
export async function listInputs(): Promise<InputDevice[]> {
  if (!navigator.mediaDevices?.enumerateDevices) return [];
  const all = await navigator.mediaDevices.enumerateDevices();
  return all
    .filter((d) => d.kind === 'audioinput')
    .map((d, i) => ({ deviceId: d.deviceId, label: d.label || `Input ${i + 1}` }));
}

/**
 * Classifies a getUserMedia failure into a message for the bench.
 *
 * @example describeInputError({ name: 'NotAllowedError' }).kind // 'permission-denied'
 */
export function describeInputError(err: unknown): InputFailure {
  const name = (err as { name?: string })?.name ?? '';
  const detail = (err as { message?: string })?.message ?? String(err);
  switch (name) {
    case 'NotAllowedError':
    case 'SecurityError':
      return {
        kind: 'permission-denied',
        message:
          'Spanmeter may not use the audio input. Allow microphone access for this page (the browser’s or the system’s privacy settings), then press “Open the input again”, or use the simulated oscillator.',
      };
    case 'NotFoundError':
    case 'OverconstrainedError':
      return {
        kind: 'no-device',
        message:
          'No such audio input. Plug in the interface, or choose another input or the simulated oscillator.',
      };
    case 'NotReadableError':
    case 'AbortError':
      return {
        kind: 'busy',
        message: `The audio input could not be opened (${detail}). Another program may be using it.`,
      };
    default:
      return { kind: 'other', message: `The audio input could not be opened: ${detail}` };
  }
}

/** Options of {@link openInput}. */
export interface OpenInputOptions {
  /** A device from {@link listInputs}, or null for the system's default input. */
  readonly deviceId: string | null;
  /** 0-based channel to analyse. */
  readonly channelIndex: number;
  /** The engine worker's end of the audio channel is created here and given to `connectEngine`. */
  connectEngine(port: MessagePort, sampleRateHz: number): void;
  /** Called when the worklet sees a different number of input channels. */
  onChannels(count: number): void;
  /** Called when the device goes away (unplugged, or stopped by the system). */
  onEnded(): void;
}

/**
 * Opens an input: getUserMedia with echo cancellation, noise suppression and automatic gain control
 * off and as many channels as the device offers, an AudioContext at the track's own sample rate, and
 * the capture worklet.
 *
 * @returns The open input, or a typed failure.
 */
export async function openInput(
  o: OpenInputOptions,
): Promise<{ ok: true; input: OpenInput } | { ok: false; failure: InputFailure }> {
  if (!navigator.mediaDevices?.getUserMedia || typeof AudioWorkletNode === 'undefined') {
    return {
      ok: false,
      failure: { kind: 'unsupported', message: 'This browser cannot capture audio with an AudioWorklet.' },
    };
  }
  let stream: MediaStream;
  try {
    stream = await navigator.mediaDevices.getUserMedia({
      audio: {
        ...(o.deviceId ? { deviceId: { exact: o.deviceId } } : {}),
        echoCancellation: false,
        noiseSuppression: false,
        autoGainControl: false,
        channelCount: { ideal: 2 },
      },
      video: false,
    });
  } catch (err) {
    return { ok: false, failure: describeInputError(err) };
  }
  const track = stream.getAudioTracks()[0];
  if (!track) {
    stream.getTracks().forEach((t) => t.stop());
    return { ok: false, failure: { kind: 'no-device', message: 'The input gave no audio track.' } };
  }
  // As many channels as the device allows (a multi-input interface may offer more than two), and its
  // highest sample rate, so that the browser does not resample what the device delivers.
  try {
    const caps = track.getCapabilities?.();
    const now = track.getSettings();
    const maxChannels = caps?.channelCount?.max;
    const maxRate = caps?.sampleRate?.max;
    const wanted: MediaTrackConstraints = {};
    if (typeof maxChannels === 'number' && maxChannels > (now.channelCount ?? 1)) {
      wanted.channelCount = { ideal: maxChannels };
    }
    if (typeof maxRate === 'number' && maxRate > (now.sampleRate ?? 0) && maxRate <= 384_000) {
      wanted.sampleRate = { ideal: maxRate };
    }
    if (Object.keys(wanted).length > 0)
      await track.applyConstraints({ ...track.getConstraints(), ...wanted });
  } catch {
    // Keep what the browser gave.
  }
  const settings = track.getSettings();
  let context: AudioContext;
  try {
    context = settings.sampleRate
      ? new AudioContext({ sampleRate: settings.sampleRate, latencyHint: 'interactive' })
      : new AudioContext({ latencyHint: 'interactive' });
  } catch {
    context = new AudioContext({ latencyHint: 'interactive' });
  }
  try {
    await context.audioWorklet.addModule(workletUrl);
  } catch (err) {
    stream.getTracks().forEach((t) => t.stop());
    void context.close();
    return {
      ok: false,
      failure: { kind: 'other', message: `The capture worklet did not load: ${String(err)}` },
    };
  }
  const source = context.createMediaStreamSource(stream);
  const node = new AudioWorkletNode(context, PROCESSOR_NAME, {
    numberOfInputs: 1,
    numberOfOutputs: 0,
    channelCountMode: 'max',
    processorOptions: { blockFrames: BLOCK_FRAMES, poolSize: 16, channel: o.channelIndex },
  });
  const channel = new MessageChannel();
  const toWorklet: ToWorklet = { type: 'connect', port: channel.port1 };
  node.port.postMessage(toWorklet, [channel.port1]);
  node.port.onmessage = (e: MessageEvent<FromWorklet>) => {
    if (e.data?.type === 'format') o.onChannels(e.data.inputChannels);
  };
  o.connectEngine(channel.port2, context.sampleRate);
  source.connect(node);
  let closed = false;
  track.addEventListener('ended', () => {
    if (!closed) o.onEnded();
  });
  const input: OpenInput = {
    deviceId: settings.deviceId ?? o.deviceId ?? 'default',
    label: track.label || 'Audio input',
    sampleRateHz: context.sampleRate,
    settings,
    context,
    setChannelIndex: (c) => {
      const m: ToWorklet = { type: 'channel', channel: c };
      node.port.postMessage(m);
    },
    resume: async () => {
      if (context.state === 'suspended') await context.resume();
    },
    close: () => {
      closed = true;
      try {
        source.disconnect();
        node.disconnect();
      } catch {
        // already disconnected
      }
      stream.getTracks().forEach((t) => t.stop());
      void context.close();
    },
  };
  // Without a user gesture the browser may keep the context suspended; the page then offers a button.
  if (context.state === 'suspended') void context.resume().catch(() => undefined);
  return { ok: true, input };
}
