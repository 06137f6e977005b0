// The hostile-input table: inputs and targets that once hung, flooded the terminal, or replaced files.
// Each must give one clear line on stderr, nothing on stdout, a non-zero exit, within a second (the checks
// are a stat and a header read, so a second is a wide margin), and leave the disk as it was.
// Run in process through run() (cli/main.ts); one spawned smoke test runs the real program on a FIFO.
import { spawnSync } from 'node:child_process';
import {
  lstatSync,
  mkdirSync,
  mkdtempSync,
  readdirSync,
  readFileSync,
  rmSync,
  symlinkSync,
  writeFileSync,
} from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { cli, cliInProcess, type Ran } from './cli-run.ts';

let dir = '';
let hasFifo = false;

function u32(v: number): Buffer {
  const b = Buffer.alloc(4);
  b.writeUInt32LE(v);
  return b;
}
function chunk(id: string, body: Buffer, pad = true): Buffer {
  return Buffer.concat([
    Buffer.from(id, 'latin1'),
    u32(body.length),
    body,
    pad && body.length % 2 ? Buffer.alloc(1) : Buffer.alloc(0),
  ]);
}
function riff(...chunks: Buffer[]): Buffer {
  const body = Buffer.concat([Buffer.from('WAVE'), ...chunks]);
  return Buffer.concat([Buffer.from('RIFF'), u32(body.length), body]);
}
function fmt16(rate = 48000): Buffer {
  const b = Buffer.alloc(16);
  b.writeUInt16LE(1, 0);
  b.writeUInt16LE(1, 2);
  b.writeUInt32LE(rate, 4);
  b.writeUInt32LE(rate * 2, 8);
  b.writeUInt16LE(2, 12);
  b.writeUInt16LE(16, 14);
  return b;
}
function pcm16(frames: number, f: (i: number) => number): Buffer {
  const b = Buffer.alloc(frames * 2);
  for (let i = 0; i < frames; i++) b.writeInt16LE(Math.round(f(i)), 2 * i);
  return b;
}

/** Every entry under the folder with its kind, size and modification time. */
function snapshot(): string {
  const lines: string[] = [];
  const walk = (d: string) => {
    for (const name of readdirSync(d).sort()) {
      const p = join(d, name);
      const st = lstatSync(p);
      lines.push(`${p} ${st.mode} ${st.size} ${st.mtimeMs}`);
      if (st.isDirectory()) walk(p);
    }
  };
  walk(dir);
  return lines.join('\n');
}

function expectOneLineFailure(r: Ran & { ms?: number }, pattern: RegExp): void {
  expect(r.stdout, 'stdout').toBe('');
  expect(r.stderr.endsWith('\n'), `stderr: ${JSON.stringify(r.stderr)}`).toBe(true);
  expect(r.stderr.trimEnd().split('\n'), 'one line on stderr').toHaveLength(1);
  expect(r.stderr.length, 'a short line').toBeLessThan(500);
  // eslint-disable-next-line no-control-regex -- looking for raw control characters is the point
  expect(r.stderr, 'no raw control characters').not.toMatch(/[\x00-\x09\x0b-\x1f\x7f]/);
  expect(r.stderr.trimEnd()).toMatch(pattern);
  expect(r.code).not.toBe(0);
  // A hostile input that hangs the command never returns, and the test's own timeout fails it; how long a
  // refusal takes is not asserted (it depends on the machine).
}

beforeAll(async () => {
  // Load the command modules first, so the timings below are the commands' own.
  await cliInProcess('analyze', '--help');
  await cliInProcess('simulate', '--help');
  dir = mkdtempSync(join(tmpdir(), 'spanmeter-hostile-'));
  hasFifo = spawnSync('mkfifo', [join(dir, 'pipe.wav')]).status === 0;
  const flood = Buffer.alloc(16 * 1024 * 1024);
  for (let i = 0; i < flood.length; i += 8) flood.write('JUNK', i, 'latin1');
  writeFileSync(join(dir, 'flood.wav'), riff(flood));
  writeFileSync(
    join(dir, 'dc.wav'),
    riff(
      chunk('fmt ', fmt16()),
      chunk(
        'data',
        pcm16(48000, () => 8000),
      ),
    ),
  );
  writeFileSync(
    join(dir, 'nopad.wav'),
    riff(
      chunk('fmt ', fmt16()),
      chunk('xtra', Buffer.from([1, 2, 3]), false),
      chunk(
        'data',
        pcm16(48000, (i) => 10000 * Math.sin((2 * Math.PI * 440 * i) / 48000)),
      ),
    ),
  );
  writeFileSync(join(dir, 'not\u001b[2Jwav\n.wav'), 'hello');
  writeFileSync(join(dir, 'kept.wav'), 'a recording the user made');
  mkdirSync(join(dir, 'folder.wav'));
  symlinkSync(join(dir, 'kept.wav'), join(dir, 'link.wav'));
  symlinkSync('/dev/zero', join(dir, 'zero-link.wav'));
});

afterAll(() => {
  rmSync(dir, { recursive: true, force: true });
});

describe('analyze: hostile inputs', () => {
  it('a FIFO with no writer is refused without opening it', async (ctx) => {
    if (!hasFifo) ctx.skip();
    const before = snapshot();
    expectOneLineFailure(
      await cliInProcess('analyze', join(dir, 'pipe.wav')),
      /^spanmeter analyze: '.*pipe\.wav' is a FIFO \(named pipe\), not a WAV file$/,
    );
    expect(snapshot()).toBe(before);
  });

  it.each([
    ['/dev/zero', /^spanmeter analyze: '\/dev\/zero' is a character device, not a WAV file$/],
    ['zero-link.wav', /^spanmeter analyze: '.*zero-link\.wav' is a character device, not a WAV file$/],
    ['folder.wav', /^spanmeter analyze: '.*folder\.wav' is a directory, not a WAV file$/],
  ])('%s is refused up front', async (name, pattern) => {
    const before = snapshot();
    expectOneLineFailure(
      await cliInProcess('analyze', name.startsWith('/') ? name : join(dir, name)),
      pattern,
    );
    expect(snapshot()).toBe(before);
  });

  it('16 MB of empty chunks: one short line', async () => {
    expectOneLineFailure(
      await cliInProcess('analyze', join(dir, 'flood.wav')),
      /^spanmeter analyze: '.*flood\.wav': malformed: more than 100000 chunks before the audio \('JUNK', .*…\)$/,
    );
  });

  it('control characters in a file name are escaped, not sent to the terminal', async () => {
    expectOneLineFailure(
      await cliInProcess('analyze', join(dir, 'not\u001b[2Jwav\n.wav')),
      /^spanmeter analyze: '.*not\\x1b\[2Jwav\\n\.wav': not a WAV file: it starts with 'hell' instead of 'RIFF'$/,
    );
  });

  it('a DC level with no signal is named as such', async () => {
    expectOneLineFailure(
      await cliInProcess('analyze', join(dir, 'dc.wav')),
      /^spanmeter analyze: only a DC level, no signal: every sample sits near \+0\.2441 of full scale/,
    );
    expectOneLineFailure(
      await cliInProcess('analyze', join(dir, 'dc.wav'), '--points', '0'),
      /^spanmeter analyze: only a DC level, no signal/,
    );
  });

  it('an odd-sized chunk without its pad byte is read (440 Hz sine reads as A4)', async () => {
    const r = await cliInProcess('analyze', join(dir, 'nopad.wav'), '--json');
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    const out = JSON.parse(r.stdout) as { steps: { hz: number; note: string }[] };
    expect(out.steps[0].note).toBe('A4'); // A4 = 440 Hz, ISO 16:1975
    expect(Math.abs(1200 * Math.log2(out.steps[0].hz / 440))).toBeLessThan(0.01);
  });
});

describe('simulate: targets it must not write', () => {
  it('an existing file is kept without --force', async () => {
    const before = snapshot();
    expectOneLineFailure(
      await cliInProcess('simulate', '--out', join(dir, 'kept.wav'), '--plan', '0', '--hold', '0.2'),
      /^spanmeter simulate: --out '.*kept\.wav' already exists; add --force to replace it$/,
    );
    expect(snapshot()).toBe(before);
    expect(readFileSync(join(dir, 'kept.wav'), 'utf8')).toBe('a recording the user made');
  });

  it.each([
    ['folder.wav', 'a directory'],
    ['link.wav', 'a symbolic link'],
    ['/dev/null', 'a character device'],
  ])('%s is refused, with or without --force', async (name, kind) => {
    const target = name.startsWith('/') ? name : join(dir, name);
    for (const force of [[], ['--force']]) {
      const before = snapshot();
      expectOneLineFailure(
        await cliInProcess('simulate', '--out', target, '--plan', '0', '--hold', '0.2', ...force),
        new RegExp(
          `^spanmeter simulate: --out '.*' is ${kind}; simulate writes only regular files, and never through a link$`,
        ),
      );
      expect(snapshot()).toBe(before);
    }
    expect(readFileSync(join(dir, 'kept.wav'), 'utf8')).toBe('a recording the user made');
  });

  it('a FIFO is refused', async (ctx) => {
    if (!hasFifo) ctx.skip();
    expectOneLineFailure(
      await cliInProcess('simulate', '--out', join(dir, 'pipe.wav'), '--plan', '0', '--hold', '0.2'),
      /is a FIFO \(named pipe\); simulate writes only regular files/,
    );
  });

  it('--truth onto an existing file is refused before anything is written', async () => {
    const before = snapshot();
    expectOneLineFailure(
      await cliInProcess(
        'simulate',
        '--out',
        join(dir, 'new.wav'),
        '--truth',
        join(dir, 'kept.wav'),
        '--plan',
        '0',
      ),
      /^spanmeter simulate: --truth '.*kept\.wav' already exists; add --force to replace it$/,
    );
    expect(snapshot()).toBe(before);
  });

  it('--force replaces an existing regular file, atomically, and leaves no temporary file', async () => {
    const target = join(dir, 'replace-me.wav');
    writeFileSync(target, 'old');
    const r = await cliInProcess('simulate', '--out', target, '--plan', '0', '--hold', '0.2', '--force');
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    expect(readFileSync(target).subarray(0, 4).toString('latin1')).toBe('RIFF');
    expect(readdirSync(dir).filter((n) => n.endsWith('.tmp'))).toEqual([]);
    rmSync(target);
  });
});

// Spawned on purpose: opening a FIFO with no writer blocks the opening thread, so the question is whether the real
// process ends at all (its exit, not just run()'s answer); an in-process run cannot show that.
describe('the real program (spawned)', () => {
  it('a FIFO with no writer ends at once with one line', (ctx) => {
    if (!hasFifo) ctx.skip();
    const r = cli('analyze', join(dir, 'pipe.wav'));
    expect(r.code).toBe(1);
    expect(r.stdout).toBe('');
    expect(r.stderr).toMatch(/^spanmeter analyze: '.*pipe\.wav' is a FIFO \(named pipe\), not a WAV file\n$/);
  });
});
