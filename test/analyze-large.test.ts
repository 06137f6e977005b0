// Files over 2 GiB and over 4 GB read by `spanmeter analyze`, in process through run(). The files are
// sparse: a 1 s tone after a JUNK chunk of more than 2 GiB (plain RIFF; its 32-bit size still fits) or of
// 4.5 GB (RF64, EBU Tech 3306, the size in the ds64 table), so nothing of that size is written to disk,
// and every sample offset lies beyond what a 32-bit or readFile-based reader reaches.
import { closeSync, mkdtempSync, openSync, rmSync, statSync, writeSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { cliInProcess } from './cli-run.ts';

let dir = '';

function u32(v: number): Buffer {
  const b = Buffer.alloc(4);
  b.writeUInt32LE(v);
  return b;
}
function u64(v: number): Buffer {
  const b = Buffer.alloc(8);
  b.writeBigUInt64LE(BigInt(v));
  return b;
}

/** fmt and data chunks of 1 s of 440 Hz, 16-bit mono at 48 kHz. */
function toneChunks(): Buffer {
  const fmt = Buffer.alloc(16);
  fmt.writeUInt16LE(1, 0);
  fmt.writeUInt16LE(1, 2);
  fmt.writeUInt32LE(48000, 4);
  fmt.writeUInt32LE(96000, 8);
  fmt.writeUInt16LE(2, 12);
  fmt.writeUInt16LE(16, 14);
  const data = Buffer.alloc(96000);
  for (let i = 0; i < 48000; i++)
    data.writeInt16LE(Math.round(12000 * Math.sin((2 * Math.PI * 440 * i) / 48000)), 2 * i);
  return Buffer.concat([Buffer.from('fmt '), u32(16), fmt, Buffer.from('data'), u32(data.length), data]);
}

/** Writes `head`, leaves a hole of `gap` bytes, then writes `tail`. */
function sparse(path: string, head: Buffer, gap: number, tail: Buffer): void {
  const fd = openSync(path, 'w');
  try {
    writeSync(fd, head, 0, head.length, 0);
    writeSync(fd, tail, 0, tail.length, head.length + gap);
  } finally {
    closeSync(fd);
  }
}

beforeAll(async () => {
  await cliInProcess('analyze', '--help');
  dir = mkdtempSync(join(tmpdir(), 'spanmeter-large-'));
  const tail = toneChunks();
  const junk2 = 2.2e9; // > 2 GiB (2 147 483 648 bytes)
  sparse(
    join(dir, 'riff-2g.wav'),
    Buffer.concat([
      Buffer.from('RIFF'),
      u32(4 + 8 + junk2 + tail.length),
      Buffer.from('WAVE'),
      Buffer.from('JUNK'),
      u32(junk2),
    ]),
    junk2,
    tail,
  );
  const junk4 = 4.5e9; // > 4 GiB: needs RF64
  const total = 4 + 36 + 8 + junk4 + tail.length;
  const ds64 = Buffer.concat([u64(total), u64(96000), u64(48000), u32(1), Buffer.from('JUNK'), u64(junk4)]);
  sparse(
    join(dir, 'rf64-4g.wav'),
    Buffer.concat([
      Buffer.from('RF64'),
      u32(0xffffffff),
      Buffer.from('WAVE'),
      Buffer.from('ds64'),
      u32(ds64.length),
      ds64,
      Buffer.from('JUNK'),
      u32(0xffffffff),
    ]),
    junk4,
    tail,
  );
});

afterAll(() => {
  rmSync(dir, { recursive: true, force: true });
});

describe('analyze: large files', () => {
  it.each(['riff-2g.wav', 'rf64-4g.wav'])(
    '%s: the tone after the gap reads as A4 (440 Hz, ISO 16:1975)',
    async (name) => {
      expect(statSync(join(dir, name)).size).toBeGreaterThan(2 ** 31);
      const r = await cliInProcess('analyze', join(dir, name), '--json');
      expect(r.stderr).toBe('');
      expect(r.code).toBe(0);
      const out = JSON.parse(r.stdout) as { steps: { hz: number; note: string }[] };
      expect(out.steps[0].note).toBe('A4');
      expect(Math.abs(1200 * Math.log2(out.steps[0].hz / 440))).toBeLessThan(0.01);
    },
  );
});
