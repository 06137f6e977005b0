/**
 * The main side of the IPC contract: one `ipcMain.handle` per channel that checks the sender,
 * the size and the shape of the request, calls the handler, checks the response, and turns every
 * failure into a typed `{ ok: false, error: { code, message } }` instead of an exception.
 *
 * Takes `ipcMain` as a parameter so tests can pass a fake that records the handlers.
 */
import type { z } from 'zod';
import {
  CHANNELS,
  CONTRACT,
  MAX_PAYLOAD_BYTES,
  isIpcErrorCode,
  type Channel,
  type ChannelSpec,
  type IpcErrorCode,
  type IpcFailure,
  type IpcResult,
} from './ipc-contract.ts';

/** The part of a `WebFrameMain` the sender check reads. */
export interface SenderFrameLike {
  readonly url: string;
  /** `null` for a top-level frame. */
  readonly parent?: unknown;
}

/** The part of Electron's `IpcMainInvokeEvent` this module reads. */
export interface InvokeEventLike {
  readonly senderFrame: SenderFrameLike | null;
}

/** The part of Electron's `ipcMain` this module uses. */
export interface IpcMainLike {
  handle(channel: string, listener: (event: InvokeEventLike, ...args: unknown[]) => Promise<unknown>): void;
}

type RequestOut<C extends Channel> = z.output<(typeof CONTRACT)[C]['request']>;
type ResponseIn<C extends Channel> = z.input<(typeof CONTRACT)[C]['response']>;

/** One implementation per channel. May throw {@link IpcError} for expected failures. */
export type IpcHandlers = {
  [C in Channel]: (request: RequestOut<C>, event: InvokeEventLike) => Promise<ResponseIn<C>> | ResponseIn<C>;
};

export interface RegisterIpcOptions {
  /**
   * Decides whether the event comes from the app's own page. Electron security checklist item 17,
   * "Validate the sender of all IPC messages": check `event.senderFrame`, not the page's word.
   */
  isTrustedSender(event: InvokeEventLike): boolean;
  /** Receives one line per rejected call (optional). */
  log?(line: string): void;
}

/** An expected failure a handler reports: its code and message go to the renderer as they are. */
export class IpcError extends Error {
  constructor(
    readonly code: IpcErrorCode,
    message: string,
  ) {
    super(message);
    this.name = 'IpcError';
  }
}

/** Size of a payload, or why it cannot be carried as JSON. */
export type PayloadMeasure = { kind: 'ok'; bytes: number } | { kind: 'not-json'; reason: string };

class NotJson extends Error {}

const encoder = new TextEncoder();

/** UTF-8 length of a string, bytes (TextEncoder, so the module also type-checks where Node's Buffer is absent). */
function utf8Bytes(text: string): number {
  return encoder.encode(text).byteLength;
}

function describe(value: unknown): string {
  if (value === null) return 'null';
  if (typeof value !== 'object') return typeof value;
  const name = (Object.getPrototypeOf(value) as { constructor?: { name?: string } } | null)?.constructor
    ?.name;
  return name ? `a ${name} object` : 'an object';
}

/**
 * Measures a payload as the UTF-8 bytes of its JSON text, refusing anything JSON cannot carry
 * faithfully: functions, symbols, bigints, `undefined` inside objects or arrays, NaN and ±Infinity,
 * circular references, and objects that are not plain objects or arrays (Date, Map, class
 * instances). `undefined` as the whole payload means "no payload" and measures 0.
 *
 * @param value - the payload, untrusted.
 * @param allowBinary - when true, typed arrays and ArrayBuffers are allowed and count their
 *   `byteLength` (for a channel whose response limit exceeds the 1 MiB default).
 * @example measurePayload({ id: 'vco-a' }) // → { kind: 'ok', bytes: 14 }
 * @example measurePayload({ f: () => 1 }).kind // → 'not-json'
 */
export function measurePayload(value: unknown, allowBinary = false): PayloadMeasure {
  if (value === undefined) return { kind: 'ok', bytes: 0 };
  let binaryBytes = 0;
  function replacer(this: Record<string, unknown>, key: string): unknown {
    const original = this[key]; // before toJSON, so a Date is seen as a Date
    const where = key === '' ? 'the payload' : `key ${JSON.stringify(key)}`;
    switch (typeof original) {
      case 'string':
      case 'boolean':
        return original;
      case 'number':
        if (!Number.isFinite(original))
          throw new NotJson(`${where} is ${String(original)}, which JSON cannot carry`);
        return original;
      case 'object':
        break;
      default:
        throw new NotJson(`${where} is ${typeof original}, which JSON cannot carry`);
    }
    if (original === null) return null;
    if (ArrayBuffer.isView(original) || original instanceof ArrayBuffer) {
      if (!allowBinary)
        throw new NotJson(`${where} is binary data (${describe(original)}), not allowed here`);
      binaryBytes += original.byteLength;
      return null;
    }
    const proto: unknown = Object.getPrototypeOf(original);
    if (proto !== Object.prototype && proto !== null && proto !== Array.prototype) {
      throw new NotJson(`${where} is ${describe(original)}; only plain objects and arrays are allowed`);
    }
    return original;
  }
  let text: string | undefined;
  try {
    text = JSON.stringify(value, replacer);
  } catch (err) {
    if (err instanceof NotJson) return { kind: 'not-json', reason: err.message };
    if (err instanceof TypeError && /circular/i.test(err.message)) {
      return { kind: 'not-json', reason: 'the payload contains a circular reference' };
    }
    return { kind: 'not-json', reason: 'the payload cannot be written as JSON' };
  }
  if (text === undefined) return { kind: 'not-json', reason: 'the payload cannot be written as JSON' };
  return { kind: 'ok', bytes: utf8Bytes(text) + binaryBytes };
}

/**
 * Formats zod issues as one line: up to 5 issues as `path: message`, joined with `; `.
 *
 * @example formatIssues(z.strictObject({ id: z.string() }).safeParse({ id: 1 }).error)
 * // → 'id: Invalid input: expected string, received number'
 */
export function formatIssues(error: z.ZodError): string {
  const shown = error.issues.slice(0, 5).map((issue) => {
    const path = issue.path.map(String).join('.');
    return path ? `${path}: ${issue.message}` : issue.message;
  });
  const more = error.issues.length > 5 ? `; and ${error.issues.length - 5} more` : '';
  return shown.join('; ') + more;
}

function firstLine(text: string): string {
  const line = text.split('\n', 1)[0].trim();
  return line.length > 300 ? `${line.slice(0, 300)}…` : line;
}

function failure(code: IpcErrorCode, message: string): { ok: false; error: IpcFailure } {
  return { ok: false, error: { code, message } };
}

/**
 * Turns anything a handler threw into a failure: an {@link IpcError} (or any error carrying one of
 * the contract's codes) keeps its code and message; a Node file-system error (`code` like
 * `ENOENT`) becomes `io-error`; anything else `internal-error`. Only the message's first line is
 * kept: never a stack trace.
 */
export function toFailure(channel: Channel, err: unknown): IpcFailure {
  const message = err instanceof Error ? firstLine(err.message) : firstLine(String(err));
  const code = (err as { code?: unknown } | null)?.code;
  if (isIpcErrorCode(code)) return { code, message };
  if (typeof code === 'string' && /^E[A-Z]+$/.test(code)) {
    return { code: 'io-error', message: `${channel}: the file system refused: ${message}` };
  }
  return { code: 'internal-error', message: `${channel} failed: ${message}` };
}

/**
 * Runs one call through every check. Exported for tests; {@link registerIpc} wires it.
 *
 * Order: sender, argument count, JSON-ness and size, schema, handler, response schema, response
 * size. The first failing check decides the error.
 */
export async function dispatch<C extends Channel>(
  channel: C,
  handlers: IpcHandlers,
  options: RegisterIpcOptions,
  event: InvokeEventLike,
  args: unknown[],
): Promise<IpcResult<unknown>> {
  const spec = CONTRACT[channel];
  const reject = (code: IpcErrorCode, message: string) => {
    options.log?.(`[ipc] ${channel} rejected (${code}): ${message}`);
    return failure(code, message);
  };

  // Electron security checklist item 17: validate the sender of all IPC messages.
  let trusted = false;
  try {
    trusted = options.isTrustedSender(event);
  } catch {
    trusted = false;
  }
  if (!trusted) {
    const url = event.senderFrame?.url ?? '(frame gone)';
    return reject(
      'untrusted-sender',
      `${channel} only answers the Spanmeter window; the call came from ${url}`,
    );
  }

  if (args.length > 1) {
    return reject('invalid-payload', `${channel} takes one argument, got ${args.length}`);
  }
  const payload = args[0];

  const measured = measurePayload(payload);
  if (measured.kind === 'not-json') return reject('not-json', `${channel}: ${measured.reason}`);
  if (measured.bytes > MAX_PAYLOAD_BYTES) {
    return reject(
      'payload-too-large',
      `${channel}: the request is ${measured.bytes} bytes; the limit is ${MAX_PAYLOAD_BYTES} bytes (1 MiB)`,
    );
  }

  const parsed = spec.request.safeParse(payload);
  if (!parsed.success) {
    const what = payload === undefined ? 'a payload is required' : formatIssues(parsed.error);
    const noneExpected = spec.request.safeParse(undefined).success;
    return reject(
      'invalid-payload',
      noneExpected ? `${channel} takes no payload` : `${channel}: invalid request: ${what}`,
    );
  }

  let response: unknown;
  try {
    const handler = handlers[channel] as (request: unknown, event: InvokeEventLike) => unknown;
    response = await handler(parsed.data, event);
  } catch (err) {
    const f = toFailure(channel, err);
    return reject(f.code, f.message);
  }

  const checked = spec.response.safeParse(response);
  if (!checked.success) {
    return reject(
      'invalid-response',
      `${channel} produced an invalid response: ${formatIssues(checked.error)}`,
    );
  }
  const limit: number = (spec as ChannelSpec).maxResponseBytes ?? MAX_PAYLOAD_BYTES;
  const size = measurePayload(checked.data, limit > MAX_PAYLOAD_BYTES);
  if (size.kind === 'not-json') return reject('invalid-response', `${channel}: ${size.reason}`);
  if (size.bytes > limit) {
    return reject(
      'payload-too-large',
      `${channel}: the response is ${size.bytes} bytes; the limit is ${limit} bytes`,
    );
  }
  return { ok: true, value: checked.data };
}

/**
 * Registers one `ipcMain.handle` per channel of the contract. Every handler resolves to an
 * `IpcResult`; nothing is thrown across IPC.
 *
 * @param ipcMain - Electron's `ipcMain`, or a fake with a `handle(channel, listener)` method.
 * @param handlers - one implementation per channel.
 * @param options - the sender check (checklist item 17) and an optional logger.
 * @example registerIpc(ipcMain, handlers, { isTrustedSender: (e) => isTrustedSenderFrame(e.senderFrame) })
 */
export function registerIpc(ipcMain: IpcMainLike, handlers: IpcHandlers, options: RegisterIpcOptions): void {
  for (const channel of CHANNELS) {
    if (typeof handlers[channel] !== 'function') {
      throw new Error(`registerIpc: no handler for channel "${channel}"`);
    }
    ipcMain.handle(channel, (event, ...args) => dispatch(channel, handlers, options, event, args));
  }
}
