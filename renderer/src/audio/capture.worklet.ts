/**
 * The capture worklet: runs on the audio rendering thread and only copies. Each render quantum's
 * samples of the selected channel go into a preallocated buffer; a full buffer is transferred to the
 * engine worker over a MessagePort and comes back through the same port for reuse. When no buffer is
 * free (the worker is behind) the block is dropped and counted; the next buffer sent carries the count
 * (`dropped`, render quanta lost just before its first sample), so the engine knows where the stream
 * breaks. Nothing here allocates per quantum.
 */

// Minimal declarations of the AudioWorkletGlobalScope (Web Audio API, W3C Recommendation, §1.32).
declare class AudioWorkletProcessor {
  readonly port: MessagePort;
  constructor(options?: unknown);
}
declare function registerProcessor(
  name: string,
  ctor: new (options: ProcessorInit) => AudioWorkletProcessor,
): void;

interface ProcessorInit {
  processorOptions?: { blockFrames?: number; poolSize?: number; channel?: number };
}

/** Name the page creates the node with. */
const PROCESSOR_NAME = 'spanmeter-capture';

class CaptureProcessor extends AudioWorkletProcessor {
  private out: MessagePort | null = null;
  private readonly free: ArrayBuffer[] = [];
  private current: Float32Array | null = null;
  private fill = 0;
  private channel = 0;
  private dropped = 0;
  private inputChannels = -1;
  private readonly frames: number;

  constructor(options: ProcessorInit) {
    super(options);
    const o = options.processorOptions ?? {};
    this.frames = Math.max(128, Math.min(16384, Math.round(o.blockFrames ?? 2048)));
    const pool = Math.max(2, Math.min(64, Math.round(o.poolSize ?? 16)));
    for (let i = 0; i < pool; i++) this.free.push(new ArrayBuffer(this.frames * 4));
    this.channel = Math.max(0, Math.round(o.channel ?? 0));
    this.current = new Float32Array(this.free.pop() as ArrayBuffer);
    this.port.onmessage = (e: MessageEvent) => {
      const m = e.data as { type?: string; port?: MessagePort; channel?: number };
      if (m.type === 'connect' && m.port) {
        this.out = m.port;
        this.out.onmessage = (ev: MessageEvent) => {
          const r = ev.data as { type?: string; buffer?: ArrayBuffer };
          if (r.type !== 'recycle' || !r.buffer) return;
          if (this.current === null) this.current = new Float32Array(r.buffer);
          else this.free.push(r.buffer);
        };
      } else if (m.type === 'channel' && typeof m.channel === 'number') {
        this.channel = Math.max(0, Math.round(m.channel));
      }
    };
  }

  process(inputs: Float32Array[][]): boolean {
    const input = inputs[0];
    const n = input ? input.length : 0;
    if (n !== this.inputChannels) {
      this.inputChannels = n;
      this.port.postMessage({ type: 'format', inputChannels: n });
    }
    if (n === 0 || this.out === null) return true;
    const src = input[Math.min(this.channel, n - 1)];
    let i = 0;
    while (i < src.length) {
      const cur = this.current;
      if (cur === null) {
        // No free buffer: drop the rest of this quantum.
        this.dropped++;
        return true;
      }
      const take = Math.min(src.length - i, cur.length - this.fill);
      for (let k = 0; k < take; k++) cur[this.fill + k] = src[i + k];
      this.fill += take;
      i += take;
      if (this.fill === cur.length) {
        this.out.postMessage(
          { type: 'audio', buffer: cur.buffer, frames: cur.length, inputChannels: n, dropped: this.dropped },
          [cur.buffer],
        );
        this.dropped = 0;
        this.fill = 0;
        const next = this.free.pop();
        this.current = next ? new Float32Array(next) : null;
      }
    }
    return true;
  }
}

registerProcessor(PROCESSOR_NAME, CaptureProcessor);
