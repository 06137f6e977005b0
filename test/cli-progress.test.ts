// Progress on stderr for a long analysis (cli/progress.ts): only on a terminal, only after two seconds,
// erased at the end, so pipes and logs never see it.
import { describe, expect, it } from 'vitest';
import { progressLine, PROGRESS_AFTER_MS } from '../cli/progress.ts';
import { escapeControls, printableMessage, quotePath, MAX_MESSAGE_CHARS } from '../cli/errors.ts';

function stream(isTTY: boolean) {
  const out: string[] = [];
  return { isTTY, write: (t: string) => void out.push(t), out };
}

describe('progressLine', () => {
  it('writes nothing when stderr is not a terminal', () => {
    const s = stream(false);
    let now = 0;
    const p = progressLine('reading x.wav', s, () => now);
    for (now = 0; now < 10_000; now += 500) p.update(now / 10_000);
    p.done();
    expect(s.out).toEqual([]);
  });

  it('on a terminal: silent for the first two seconds, then one updating line, erased at the end', () => {
    const s = stream(true);
    let now = 0;
    const p = progressLine('reading x.wav', s, () => now);
    now = PROGRESS_AFTER_MS - 1;
    p.update(0.2);
    expect(s.out).toEqual([]);
    now = 4000;
    p.update(0.5);
    expect(s.out).toEqual(['\rreading x.wav: 50 %, about 4 s left\u001b[K']);
    p.done();
    expect(s.out.at(-1)).toBe('\r\u001b[K');
  });

  it('a quick job leaves no trace', () => {
    const s = stream(true);
    const p = progressLine('x', s, () => 0);
    p.update(1);
    p.done();
    expect(s.out).toEqual([]);
  });
});

describe('messages for a terminal (ECMA-48 control characters escaped)', () => {
  it('escapes C0, DEL, C1 and bidi controls', () => {
    expect(escapeControls('a\u001b[2Jb\nc\td\u007f\u009b\u202e')).toBe('a\\x1b[2Jb\\nc\\td\\x7f\\x9b\\u202e');
  });
  it('keeps ordinary text, µ and Ω included', () => {
    expect(escapeControls('take µV Ω.wav')).toBe('take µV Ω.wav');
  });
  it('caps a message and folds its lines', () => {
    expect(printableMessage('one\n  two')).toBe('one two');
    const long = printableMessage('x'.repeat(5000));
    expect(Array.from(long)).toHaveLength(MAX_MESSAGE_CHARS);
    expect(long.endsWith('…')).toBe(true);
  });
  it('quotes and shortens a path', () => {
    expect(quotePath('a\nb.wav')).toBe("'a\\nb.wav'");
    expect(quotePath('d/'.repeat(200)).length).toBeLessThan(130);
  });
});
