/**
 * An error meant for the person at the command line: its message is printed as one line on stderr,
 * with no stack trace, and the command exits with `exitCode`.
 */
export class CliError extends Error {
  constructor(
    message: string,
    readonly exitCode: number = 1,
  ) {
    super(message);
    this.name = 'CliError';
  }
}

/** Longest message printed, characters; a longer one is cut with "…" (a file name can be 4096 bytes). */
export const MAX_MESSAGE_CHARS = 400;

/**
 * Text made safe to print on a terminal: C0 and C1 control characters, DEL and the Unicode bidirectional
 * and line/paragraph separators (which can reorder or hide what follows) are written as escapes (`\n`,
 * `\t`, `\x1b`, `\u202e`), so a file name can neither break the one-line message nor drive the terminal.
 * The control ranges are those of ECMA-48 (ISO/IEC 6429) §5; the bidi controls are Unicode UAX #9.
 *
 * @example escapeControls('a\x1b[2Jb\n') // 'a\\x1b[2Jb\\n'
 */
export function escapeControls(text: string): string {
  return text.replace(
    // eslint-disable-next-line no-control-regex -- matching control characters is the point
    /[\u0000-\u001f\u007f-\u009f\u2028\u2029\u200e\u200f\u202a-\u202e\u2066-\u2069]/g,
    (c) => {
      const code = c.charCodeAt(0);
      if (c === '\n') return '\\n';
      if (c === '\r') return '\\r';
      if (c === '\t') return '\\t';
      return code <= 0xff
        ? `\\x${code.toString(16).padStart(2, '0')}`
        : `\\u${code.toString(16).padStart(4, '0')}`;
    },
  );
}

/**
 * A message as printed: intentional line breaks folded into spaces, control characters escaped
 * ({@link escapeControls}), and cut to {@link MAX_MESSAGE_CHARS} characters.
 *
 * @example printableMessage('bad\n  thing') // 'bad thing'
 */
export function printableMessage(text: string): string {
  const one = escapeControls(text.replace(/\s*\n\s*/g, ' ').trim());
  const chars = Array.from(one);
  return chars.length <= MAX_MESSAGE_CHARS ? one : `${chars.slice(0, MAX_MESSAGE_CHARS - 1).join('')}…`;
}

/**
 * A file path quoted for a message, its control characters escaped and a very long one shortened in the
 * middle: `'take 1.wav'`.
 *
 * @example quotePath('a\nb.wav') // "'a\\nb.wav'"
 */
export function quotePath(path: string): string {
  const safe = Array.from(escapeControls(path));
  const shown =
    safe.length <= 160 ? safe.join('') : `${safe.slice(0, 60).join('')}…${safe.slice(-60).join('')}`;
  return `'${shown}'`;
}
