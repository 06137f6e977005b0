/**
 * The engine worker: hosts {@link EngineCore} off the page's thread. Audio arrives from the capture
 * worklet over a MessagePort; each buffer is handed back for reuse once analysed. With the simulated
 * oscillator as the source, a timer renders it in real time (by the clock, so a late timer catches up),
 * or `pace` times faster when the address asks for it.
 */
import '../lib/zod-jitless.ts';
import { EngineCore } from './core.ts';
import type { AudioBlockMessage, FromEngine, RecycleMessage, ToEngine } from './protocol.ts';

/** The parts of the dedicated worker scope used here (the project's type libraries are the DOM's). */
interface WorkerScope {
  postMessage(message: unknown, transfer?: Transferable[]): void;
  onmessage: ((event: MessageEvent) => void) | null;
}

/** The dedicated worker's synchronous file reader (not in the DOM type library). */
declare const FileReaderSync: { new (): { readAsArrayBuffer(blob: Blob): ArrayBuffer } };

const scope = self as unknown as WorkerScope;
const core = new EngineCore({
  post: (message: FromEngine, transfer?: Transferable[]) => scope.postMessage(message, transfer ?? []),
  nowMs: () => performance.now(),
  // "Open WAV…" reads the File in slices, never whole (wav-analysis.ts).
  readBlob: (blob: Blob, start: number, end: number) =>
    new Uint8Array(new FileReaderSync().readAsArrayBuffer(blob.slice(start, end))),
});

let audioPort: MessagePort | null = null;
let simTimer: ReturnType<typeof setInterval> | null = null;
let simLast = 0;

function stopSim(): void {
  if (simTimer !== null) clearInterval(simTimer);
  simTimer = null;
}

function attachPort(port: MessagePort): void {
  if (audioPort) audioPort.close();
  audioPort = port;
  port.onmessage = (e: MessageEvent<AudioBlockMessage>) => {
    const m = e.data;
    if (!m || m.type !== 'audio') return;
    core.pushLive(new Float32Array(m.buffer, 0, m.frames), m.dropped);
    const back: RecycleMessage = { type: 'recycle', buffer: m.buffer };
    port.postMessage(back, [m.buffer]);
  };
  port.start();
}

scope.onmessage = (e: MessageEvent<ToEngine>) => {
  const msg = e.data;
  if (msg.type === 'source-live') {
    stopSim();
    attachPort(msg.port);
  } else if (msg.type === 'source-sim') {
    if (audioPort) audioPort.close();
    audioPort = null;
    stopSim();
    simLast = performance.now();
    const pace = msg.pace ?? 1;
    simTimer = setInterval(() => {
      const now = performance.now();
      core.tickSim((pace * (now - simLast)) / 1000);
      simLast = now;
    }, 20);
  } else if (msg.type === 'source-stop') {
    stopSim();
    if (audioPort) audioPort.close();
    audioPort = null;
  }
  core.handle(msg);
};
