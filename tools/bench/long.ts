/**
 * Bench cases for recordings of any length (imported by `tools/bench/bench.ts`):
 *
 * - `long`: one hour (ten minutes with `--quick`) of 48 kHz stereo 32-bit float, a held tone drifting
 *   slowly and a stepped run, analysed by the bundled command line as a child process under
 *   `/usr/bin/time -v`: wall time, speed against real time (target ≥ 50×) and peak memory (aim < 300 MB),
 *   against a bare pitchy pass over the same file (read in blocks, 8192-sample windows at 20 per second on
 *   one channel, the pass `recording` uses).
 * - `user`: the 15 s stereo stepped recording of the `recording` case, run as a user runs it, `npm run
 *   analyze -- FILE --points …`, process start and npm included (target ≥ 20× real time), beside two
 *   references run through npm the same way: the bare pitchy pass over the same file, and Node started alone.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { SAW6, writeLongToneWav } from '../../test/long-wav.ts';
import { BARE_PITCHY_PASS, cliBundle, table, writeSteppedRecording } from './shared.ts';

interface Timed {
  readonly ms: number;
  readonly status: number | null;
  readonly maxRssMb: number | null;
  /** User plus system CPU time, ms (from /usr/bin/time; null without it): less sensitive to machine load. */
  readonly cpuMs: number | null;
  readonly stderr: string;
}

/** A child process under /usr/bin/time -v when it exists: wall time, exit status, peak memory. */
function timed(cmd: string, args: string[], cwd: string): Timed {
  const useTime = existsSync('/usr/bin/time');
  const t0 = performance.now();
  const r = useTime
    ? spawnSync('/usr/bin/time', ['-v', cmd, ...args], { cwd, encoding: 'utf8', maxBuffer: 1 << 26 })
    : spawnSync(cmd, args, { cwd, encoding: 'utf8', maxBuffer: 1 << 26 });
  const ms = performance.now() - t0;
  const err = r.stderr ?? '';
  const rss = /Maximum resident set size \(kbytes\): (\d+)/.exec(err);
  const user = /User time \(seconds\): ([\d.]+)/.exec(err);
  const sys = /System time \(seconds\): ([\d.]+)/.exec(err);
  const cpuMs = user && sys ? 1000 * (Number(user[1]) + Number(sys[1])) : null;
  return { ms, status: r.status, maxRssMb: rss ? Number(rss[1]) / 1024 : null, cpuMs, stderr: err };
}

/** A bare pitchy pass over a float WAV read in blocks: 8192-sample windows at 20 per second, channel 1. */
function barePitchyArgs(file: string): string[] {
  return [
    '--input-type=module',
    '-e',
    `import { openSync, readSync } from 'node:fs';
     import { PitchDetector } from 'pitchy';
     const fd = openSync(${JSON.stringify(file)}, 'r');
     const head = Buffer.alloc(44); readSync(fd, head, 0, 44, 0);
     const ch = head.readUInt16LE(22), fs = head.readUInt32LE(24), frames = head.readUInt32LE(40) / (4 * ch);
     const det = PitchDetector.forFloat32Array(8192);
     const win = new Float32Array(8192), hop = fs / 20;
     const buf = Buffer.alloc(8192 * 4 * ch);
     let n = 0;
     for (let end = 8192; end <= frames; end += hop) {
       readSync(fd, buf, 0, buf.length, 44 + (end - 8192) * 4 * ch);
       for (let i = 0; i < 8192; i++) win[i] = buf.readFloatLE(i * 4 * ch);
       det.findPitch(win, fs); n++;
     }
     if (n === 0) process.exit(3);`,
  ];
}

function longCase(quick: boolean): boolean {
  const seconds = quick ? 600 : 3600;
  const dir = mkdtempSync(join(tmpdir(), 'spanmeter-bench-long-'));
  const bundle = cliBundle();
  const cwd = process.cwd();
  const rows: string[][] = [];
  let ok = true;
  try {
    const cases: [string, (t: number) => number, string[]][] = [
      ['held tone, +1.65 cents drift', (t) => 220 * 2 ** ((1.65 * t) / seconds / 1200), []],
      [
        'stepped run, 0–7 V',
        (t) => 55 * 2 ** Math.min(7, Math.floor((t / seconds) * 8)),
        ['--points', '0,1,2,3,4,5,6,7'],
      ],
    ];
    for (const [label, hzAt, extra] of cases) {
      const file = join(dir, 'long.wav');
      writeLongToneWav(file, seconds, 48000, 2, { hzAt, harmonics: SAW6, amplitude: 0.3 });
      const ours = timed(process.execPath, [bundle, 'analyze', file, '--json', ...extra], cwd);
      const bare = timed(process.execPath, barePitchyArgs(file), cwd);
      rmSync(file, { force: true });
      const speed = (seconds * 1000) / ours.ms;
      const meets = ours.status === 0 && speed >= 50 && (ours.maxRssMb ?? 0) < 300;
      ok &&= meets;
      const mb = (t: Timed) => (t.maxRssMb === null ? 'n/a' : t.maxRssMb.toFixed(0));
      rows.push([
        label,
        (ours.ms / 1000).toFixed(1),
        ours.cpuMs === null ? 'n/a' : (ours.cpuMs / 1000).toFixed(1),
        `${speed.toFixed(0)}×`,
        mb(ours),
        (bare.ms / 1000).toFixed(1),
        `${((seconds * 1000) / bare.ms).toFixed(0)}×`,
        mb(bare),
        (ours.ms / bare.ms).toFixed(2),
        meets ? 'yes' : 'NO',
      ]);
      if (ours.status !== 0) console.log(`\nfailure (${label}): ${ours.stderr.trim().split('\n')[0]}`);
    }
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
  table(
    `${seconds / 60} minutes of 48 kHz stereo 32-bit float, read in blocks (targets: ≥ 50× real time, peak memory < 300 MB)`,
    [
      'file',
      'ours s',
      'ours CPU s',
      'speed',
      'ours MB',
      'pitchy s',
      'pitchy speed',
      'pitchy MB',
      'time ratio',
      'meets',
    ],
    rows,
  );
  return ok;
}

/**
 * A throw-away package inside the project (so that its scripts resolve `pitchy` and `wavefile` from the
 * project's node_modules) whose npm scripts are the two references of the `user` case: Node started alone, and
 * the bare pitchy pass.
 */
function referencePackage(): string {
  const base = join(process.cwd(), 'build', 'bench');
  mkdirSync(base, { recursive: true });
  const dir = mkdtempSync(join(base, 'npm-reference-'));
  writeFileSync(
    join(dir, 'package.json'),
    JSON.stringify({
      name: 'spanmeter-bench-reference',
      private: true,
      scripts: { 'node-alone': 'node -e 0', 'bare-pitchy': 'node bare-pitchy.mjs' },
    }),
  );
  writeFileSync(join(dir, 'bare-pitchy.mjs'), BARE_PITCHY_PASS);
  return dir;
}

function userCase(runs: number): boolean {
  const dir = mkdtempSync(join(tmpdir(), 'spanmeter-bench-user-'));
  const refs = referencePackage();
  try {
    const { file, seconds, points } = writeSteppedRecording(dir);
    const npm = process.platform === 'win32' ? 'npm.cmd' : 'npm';
    // Each command run the same way, through npm, in turn: ours, then the two references.
    const commands: [string, string[], string][] = [
      [
        'npm run analyze -- FILE --points 0,1,2,3,4',
        ['run', '-s', 'analyze', '--', file, '--points', points.join(','), '--json'],
        process.cwd(),
      ],
      ['reference: npm run of a bare pitchy pass over FILE', ['run', '-s', 'bare-pitchy', '--', file], refs],
      ['reference: npm run of `node -e 0` (npm and Node start alone)', ['run', '-s', 'node-alone'], refs],
    ];
    const ms: number[][] = commands.map(() => []);
    const cpu: number[][] = commands.map(() => []);
    let failure = '';
    for (let k = 0; k < runs; k++) {
      commands.forEach(([, args, cwd], c) => {
        const r = timed(npm, args, cwd);
        if (r.status !== 0) failure ||= `${commands[c][0]}: ${r.stderr.trim().split('\n')[0] ?? 'failed'}`;
        ms[c].push(r.ms);
        if (r.cpuMs !== null) cpu[c].push(r.cpuMs);
      });
    }
    const best = (xs: number[]) => Math.min(...xs);
    const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];
    const speed = (seconds * 1000) / best(ms[0]);
    const ok = failure === '' && speed >= 20;
    table(
      `As a user runs it: npm run analyze on a ${seconds.toFixed(1)} s stereo 16-bit stepped recording, npm and process start included, best and median of ${runs}, beside two references run the same way (target ≥ 20× real time, that is ${((seconds * 1000) / 20).toFixed(0)} ms)`,
      ['command', 'best ms', 'median ms', 'best CPU ms', 'speed', 'meets'],
      commands.map(([label], c) => [
        label,
        best(ms[c]).toFixed(0),
        median(ms[c]).toFixed(0),
        cpu[c].length > 0 ? best(cpu[c]).toFixed(0) : 'n/a',
        c === 2 ? '–' : `${((seconds * 1000) / best(ms[c])).toFixed(0)}×`,
        c === 0 ? (ok ? 'yes' : 'NO') : '',
      ]),
    );
    if (failure) console.log(`\nfailure: ${failure}`);
    return ok;
  } finally {
    rmSync(dir, { recursive: true, force: true });
    rmSync(refs, { recursive: true, force: true });
  }
}

/**
 * The cases of this file that `want` selects (`long`, `user`), as `[name, meets target]` pairs.
 *
 * @param want - Whether a case was asked for (`--only`).
 * @param quick - Ten minutes instead of an hour, fewer runs.
 */
export function benchLong(want: (name: string) => boolean, quick: boolean): [string, boolean][] {
  const out: [string, boolean][] = [];
  if (want('long')) out.push(['long', longCase(quick)]);
  if (want('user')) out.push(['user', userCase(quick ? 3 : 7)]);
  return out;
}
