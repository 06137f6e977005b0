/**
 * `npm run bench`: measures the pitch engine's accuracy and speed against its targets, and runs
 * pitchy's McLeod pitch method alone and pitchfinder's YIN on the same signals in the same run.
 *
 * Figures are measured, never assumed; the tables are meant to be pasted into an issue note as they are.
 */

import { PitchDetector } from 'pitchy';
import { YIN } from 'pitchfinder';
import { estimatePitch } from '../../dsp/pitch/index.ts';
import { PitchTracker } from '../../dsp/pitch/index.ts';
import { addDcStep, addHum, addNoise, centsError, tone, toFloat32, type Shape } from '../../test/signals.ts';
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { cpus, loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { CliError } from '../../cli/errors.ts';
import { BARE_PITCHY_PASS, cliBundle, table, writeSteppedRecording } from './shared.ts';
import { modelBenchCases } from './model.ts';
import { integrityCases } from './integrity.ts';

const SHAPES: Shape[] = ['saw', 'square', 'pulse10', 'triangle', 'sine'];
const RATES = [44100, 48000, 96000];
// Octaves of C from C0 to C9 in 12-TET with A4 = 440 Hz (ISO 16:1975), plus off-grid values whose periods are
// not whole numbers of samples.
const C_OCTAVES = [
  16.3516, 32.7032, 65.4064, 130.8128, 261.6256, 523.2511, 1046.502, 2093.005, 4186.009, 8372.018,
];
const GRID = [...C_OCTAVES, 27.3, 987.7, 5111].sort((a, b) => a - b);

interface Errors {
  worst: number;
  fails: number;
  octaves: number;
}

function emptyErrors(): Errors {
  return { worst: 0, fails: 0, octaves: 0 };
}

function note(e: Errors, measuredHz: number | null, trueHz: number): void {
  if (measuredHz === null || !(measuredHz > 0) || !Number.isFinite(measuredHz)) {
    e.fails++;
    return;
  }
  const c = centsError(measuredHz, trueHz);
  if (Math.abs(c) > 600) e.octaves++;
  else if (Math.abs(c) > Math.abs(e.worst)) e.worst = c;
}

function median(xs: number[]): number | null {
  const v = xs.filter((x) => x > 0 && Number.isFinite(x)).sort((a, b) => a - b);
  if (v.length === 0) return null;
  return v.length % 2 ? v[(v.length - 1) / 2] : (v[v.length / 2 - 1] + v[v.length / 2]) / 2;
}

const detectors = new Map<number, PitchDetector<Float32Array>>();
/** pitchy alone: 8192-sample windows hopped through the signal, median of the readings. */
function pitchyMedian(x: Float32Array, fs: number, hop = 2048): number | null {
  const n = 8192;
  let det = detectors.get(n);
  if (!det) {
    det = PitchDetector.forFloat32Array(n);
    detectors.set(n, det);
  }
  const out: number[] = [];
  for (let i = 0; i + n <= x.length; i += hop) out.push(det.findPitch(x.subarray(i, i + n), fs)[0]);
  return median(out);
}

/** pitchfinder's YIN on five 8192-sample windows spread over the signal, median of the readings. */
function yinMedian(x: Float32Array, fs: number): number | null {
  const n = 8192;
  const yin = YIN({ sampleRate: fs });
  const out: number[] = [];
  for (let k = 0; k < 5; k++) {
    const i = Math.floor(((x.length - n) * k) / 4);
    const r = yin(x.subarray(i, i + n));
    if (r !== null) out.push(r);
  }
  return median(out);
}

function fmtC(c: number): string {
  if (c === 0) return '0';
  return Math.abs(c) < 0.001 ? c.toExponential(1) : c.toFixed(4);
}

function ratio(ours: Errors, theirs: Errors): string {
  if (theirs.worst === 0) return '–';
  return (Math.abs(ours.worst) / Math.abs(theirs.worst)).toExponential(1);
}

const cleanCache = new Map<string, Float64Array>();
function clean(shape: Shape, f: number, fs: number, seconds = 1): Float64Array {
  const key = `${shape}/${f}/${fs}/${seconds}`;
  let x = cleanCache.get(key);
  if (!x) {
    x = tone(shape, f, fs, seconds);
    cleanCache.set(key, x);
  }
  return Float64Array.from(x);
}

type Impair = (x: Float64Array, fs: number, f: number, seed: number) => void;

function accuracyCase(
  title: string,
  target: string,
  shapes: Shape[],
  rates: number[],
  freqs: number[],
  impair: Impair | null,
  minHz = 0,
): boolean {
  const rows: string[][] = [];
  let pass = true;
  let seed = 1;
  for (const shape of shapes) {
    for (const fs of rates) {
      const ours = emptyErrors();
      const mpm = emptyErrors();
      const yin = emptyErrors();
      let worstAt = 0;
      for (const f of freqs) {
        if (f < minHz) continue;
        const x = clean(shape, f, fs);
        if (impair) impair(x, fs, f, seed++);
        const x32 = toFloat32(x);
        const r = estimatePitch(x32, fs);
        const before = ours.worst;
        note(ours, r.kind === 'ok' ? r.hz : null, f);
        if (ours.worst !== before) worstAt = f;
        note(mpm, pitchyMedian(x32, fs), f);
        note(yin, yinMedian(x32, fs), f);
      }
      const limit = Number(target);
      const ok = ours.fails === 0 && ours.octaves === 0 && Math.abs(ours.worst) <= limit;
      pass &&= ok;
      rows.push([
        shape,
        String(fs),
        fmtC(ours.worst),
        String(worstAt),
        String(ours.octaves),
        String(ours.fails),
        ok ? 'yes' : 'NO',
        fmtC(mpm.worst),
        `${mpm.octaves}/${mpm.fails}`,
        fmtC(yin.worst),
        `${yin.octaves}/${yin.fails}`,
        ratio(ours, mpm),
        ratio(ours, yin),
      ]);
    }
  }
  table(
    `${title} (target: worst ≤ ${target} cent, no octave errors, no failures${minHz ? `, above ${minHz} Hz` : ''})`,
    [
      'shape',
      'fs',
      'worst ¢',
      'at Hz',
      'oct',
      'fail',
      'meets',
      'pitchy worst ¢',
      'pitchy oct/fail',
      'YIN worst ¢',
      'YIN oct/fail',
      'ours/pitchy',
      'ours/YIN',
    ],
    rows,
  );
  return pass;
}

/** Fourier amplitudes of the clean signal's harmonics by projection (for the Cramér–Rao bound). */
function harmonicAmplitudes(x: Float64Array, f: number, fs: number): number[] {
  const out: number[] = [];
  for (let k = 1; k * f < 0.45 * fs; k++) {
    let a = 0;
    let b = 0;
    const w = (2 * Math.PI * k * f) / fs;
    for (let i = 0; i < x.length; i++) {
      a += x[i] * Math.cos(w * i);
      b += x[i] * Math.sin(w * i);
    }
    out.push((2 * Math.hypot(a, b)) / x.length);
  }
  return out;
}

/**
 * Cramér–Rao bound on the standard deviation of a frequency estimate, Hz (D. Rife and R. Boorstyn,
 * "Single-tone parameter estimation from discrete-time observations", IEEE Trans. Inf. Theory 20(5), 1974):
 * σ_f ≥ (fs/2π)·sqrt(12 / (η·N·(N² − 1))), η = A²/2σ²; for a harmonic signal η = Σ k²·A_k²/2σ².
 */
function crbHz(amps: number[], sigma: number, n: number, fs: number): number {
  let eta = 0;
  amps.forEach((a, i) => (eta += ((i + 1) * (i + 1) * a * a) / (2 * sigma * sigma)));
  return (fs / (2 * Math.PI)) * Math.sqrt(12 / (eta * n * (n * n - 1)));
}

function crbCase(trials: number): boolean {
  const rows: string[][] = [];
  let pass = true;
  const configs: [Shape, number, number][] = [
    ['sine', 440, 40],
    ['sine', 16.3516, 20],
    ['saw', 440, 20],
  ];
  const fs = 48000;
  for (const [shape, f, snr] of configs) {
    const base = clean(shape, f, fs);
    const amps = harmonicAmplitudes(base, f, fs);
    let ss = 0;
    let sigma = 0;
    let fails = 0;
    for (let t = 0; t < trials; t++) {
      const x = Float64Array.from(base);
      sigma = addNoise(x, snr, 5000 + t);
      const r = estimatePitch(toFloat32(x), fs);
      if (r.kind !== 'ok') {
        fails++;
        continue;
      }
      ss += (r.hz - f) * (r.hz - f);
    }
    const rms = Math.sqrt(ss / (trials - fails));
    const bound = crbHz(amps, sigma, base.length, fs);
    const k = rms / bound;
    const ok = k <= 2 && fails === 0;
    pass &&= ok;
    const cents = (hz: number) => ((1200 / Math.LN2) * hz) / f;
    rows.push([
      `${shape} ${f} Hz`,
      `${snr} dB`,
      String(trials),
      rms.toExponential(3),
      fmtC(cents(rms)),
      bound.toExponential(3),
      fmtC(cents(bound)),
      k.toFixed(2),
      ok ? 'yes' : 'NO',
    ]);
  }
  table(
    'Close to the physical limit: RMS error against the Cramér–Rao bound, 1 s at 48 kHz (target: ≤ 2× bound)',
    ['signal', 'SNR', 'trials', 'RMS Hz', 'RMS ¢', 'bound Hz', 'bound ¢', 'RMS/bound', 'meets'],
    rows,
  );
  return pass;
}

function liveCase(seconds: number): boolean {
  const rows: string[][] = [];
  let pass = true;
  const fs = 48000;
  for (const f of GRID.filter((g) => g > 100)) {
    const x = tone('saw', f, fs, seconds);
    addNoise(x, 40, Math.round(f));
    const t = new PitchTracker({ sampleRateHz: fs });
    let worst = 0;
    let n = 0;
    let none = 0;
    let win = 0;
    const x32 = toFloat32(x);
    for (let i = 0; i < x32.length; i += 256) {
      t.push(x32.subarray(i, i + 256), (r) => {
        if (r.timeSeconds < 1.2) return; // first pitch acquisition
        n++;
        if (r.kind !== 'ok') {
          none++;
          return;
        }
        win = Math.max(win, r.windowSeconds);
        const c = centsError(r.hz, f);
        if (Math.abs(c) > Math.abs(worst)) worst = c;
      });
    }
    const ok = Math.abs(worst) <= 0.1 && none === 0;
    pass &&= ok;
    rows.push([String(f), String(n), String(none), (win * 1000).toFixed(0), fmtC(worst), ok ? 'yes' : 'NO']);
  }
  table(
    'Live readings, saw at 40 dB SNR, 48 kHz, 20 readings/s (target: ≤ 0.1 cent, 100 ms windows above 100 Hz)',
    ['Hz', 'readings', 'no answer', 'window ms', 'worst ¢', 'meets'],
    rows,
  );
  return pass;
}

function coverageCase(trials: number): boolean {
  const rows: string[][] = [];
  let pass = true;
  const fs = 48000;
  const configs: [Shape, number, number, number][] = [
    ['sine', 440, 30, 1],
    ['saw', 110, 20, 1],
    ['square', 1000, 35, 0.25],
    ['sine', 27.3, 20, 1],
  ];
  for (const [shape, f, snr, seconds] of configs) {
    const base = tone(shape, f, fs, seconds);
    let inside = 0;
    let sumU = 0;
    let ss = 0;
    for (let t = 0; t < trials; t++) {
      const x = Float64Array.from(base);
      addNoise(x, snr, 9000 + t);
      const r = estimatePitch(toFloat32(x), fs);
      if (r.kind !== 'ok') continue;
      const c = centsError(r.hz, f);
      ss += c * c;
      sumU += r.uncertaintyCents;
      if (Math.abs(c) <= 2 * r.uncertaintyCents) inside++;
    }
    const frac = inside / trials;
    const ok = frac >= 0.9;
    pass &&= ok;
    rows.push([
      `${shape} ${f} Hz`,
      `${snr} dB`,
      `${seconds} s`,
      String(trials),
      fmtC(Math.sqrt(ss / trials)),
      fmtC(sumU / trials),
      `${(100 * frac).toFixed(0)} %`,
      ok ? 'yes' : 'NO',
    ]);
  }
  table(
    'Honest uncertainty: share of trials whose error lies within 2 stated standard errors (target: ≥ 90 %)',
    ['signal', 'SNR', 'window', 'trials', 'RMS error ¢', 'mean stated σ ¢', 'within 2σ', 'meets'],
    rows,
  );
  return pass;
}

/**
 * Time of one call, ms. JavaScript runs the engine on one thread, so wall time on an otherwise idle machine
 * is one core's time; process.cpuUsage would also count V8's background compiler and collector threads.
 */
function cpuMs(fn: () => void): number {
  const t0 = performance.now();
  fn();
  return performance.now() - t0;
}

function throughputCase(seconds: number): boolean {
  const rows: string[][] = [];
  let pass = true;
  for (const [f, fs] of [
    [65.4064, 48000],
    [130.8128, 48000],
    [440, 48000],
    [2093.005, 48000],
    [5111, 48000],
    [440, 96000],
  ]) {
    const x = tone('saw', f, fs, seconds);
    addNoise(x, 40, 3);
    const x32 = toFloat32(x);
    // Warm up both once (JIT, per-size buffers), then measure.
    const warm = new PitchTracker({ sampleRateHz: fs });
    for (let i = 0; i < fs; i += 128) warm.push(x32.subarray(i, i + 128));
    const t = new PitchTracker({ sampleRateHz: fs });
    let readings = 0;
    const ours = cpuMs(() => {
      for (let i = 0; i < x32.length; i += 128) readings += t.push(x32.subarray(i, i + 128));
    });
    const det = PitchDetector.forFloat32Array(8192);
    const hop = fs / 20;
    for (let i = 8192; i < 8192 + 20 * hop; i += hop) det.findPitch(x32.subarray(i - 8192, i), fs);
    const theirs = cpuMs(() => {
      for (let i = 8192; i <= x32.length; i += hop) det.findPitch(x32.subarray(i - 8192, i), fs);
    });
    const rt = (seconds * 1000) / ours;
    const rtP = (seconds * 1000) / theirs;
    const costRatio = ours / theirs;
    // At 96 kHz the app's worker must stay under 10 % of one core: ≥ 10× real time.
    const ok = fs === 48000 ? rt >= 50 && costRatio <= 2 : rt >= 10;
    pass &&= ok;
    rows.push([
      String(f),
      String(fs),
      String(readings),
      ours.toFixed(0),
      `${rt.toFixed(0)}×`,
      theirs.toFixed(0),
      `${rtP.toFixed(0)}×`,
      costRatio.toFixed(2),
      ok ? 'yes' : 'NO',
    ]);
  }
  table(
    `Streaming throughput, saw at 40 dB SNR, 20 readings/s, ${seconds} s of audio, one thread (targets at 48 kHz: ≥ 50× real time, ≤ 2× the cost of pitchy alone, 8192-sample windows at the same rate)`,
    ['Hz', 'fs', 'readings', 'our ms', 'our speed', 'pitchy ms', 'pitchy speed', 'cost ratio', 'meets'],
    rows,
  );
  return pass;
}

/** Marks the CPU-time line `/usr/bin/time` appends to a child's stderr. */
const CPU_MARK = 'spanmeter-bench-cpu';

/**
 * Wall time of a child process, ms, its exit status, and its CPU time (user + system, ms, from
 * `/usr/bin/time` where it exists, else null): on a shared machine the CPU time moves far less with the
 * load than the wall time does.
 */
function timeChild(
  args: string[],
  cwd: string,
): { ms: number; cpuMs: number | null; status: number | null; stderr: string } {
  const useTime = existsSync('/usr/bin/time');
  const t0 = performance.now();
  const r = useTime
    ? spawnSync('/usr/bin/time', ['-f', `${CPU_MARK} %U %S`, process.execPath, ...args], {
        cwd,
        encoding: 'utf8',
      })
    : spawnSync(process.execPath, args, { cwd, encoding: 'utf8' });
  const ms = performance.now() - t0;
  const m = new RegExp(`${CPU_MARK} ([\\d.]+) ([\\d.]+)`).exec(r.stderr ?? '');
  const stderr = (r.stderr ?? '').replace(new RegExp(`^.*${CPU_MARK}.*$`, 'm'), '');
  return { ms, cpuMs: m ? 1000 * (Number(m[1]) + Number(m[2])) : null, status: r.status, stderr };
}

/**
 * Whole-file analysis of a 15 s stereo recording of a stepped simulated oscillator: wall time of
 * `spanmeter analyze FILE --points …` including process start, against a bare pass of pitchy over the same
 * file in its own process (wavefile decode, 8192-sample windows at 20 per second on one channel).
 */
function recordingCase(runs: number): boolean {
  const dir = mkdtempSync(join(tmpdir(), 'spanmeter-bench-'));
  try {
    const { file, seconds, points } = writeSteppedRecording(dir);
    const bundle = cliBundle();
    const cwd = process.cwd();
    const bare = ['--input-type=module', '-e', BARE_PITCHY_PASS, file];
    const ours: number[] = [];
    const theirs: number[] = [];
    const oursCpu: number[] = [];
    const theirsCpu: number[] = [];
    let failure = '';
    for (let k = 0; k < runs; k++) {
      const a = timeChild([bundle, 'analyze', file, '--points', points.join(','), '--json'], cwd);
      if (a.status !== 0) failure = a.stderr.trim();
      ours.push(a.ms);
      if (a.cpuMs !== null) oursCpu.push(a.cpuMs);
      const b = timeChild(bare, cwd);
      if (b.status !== 0) failure ||= `bare pitchy pass failed: ${b.stderr.trim().split('\n')[0]}`;
      theirs.push(b.ms);
      if (b.cpuMs !== null) theirsCpu.push(b.cpuMs);
    }
    const best = (xs: number[]) => Math.min(...xs);
    const med = (xs: number[]) => median(xs) ?? NaN;
    const cpu = (xs: number[]) => (xs.length === 0 ? 'n/a' : med(xs).toFixed(0));
    const speed = (seconds * 1000) / best(ours);
    const r = best(ours) / best(theirs);
    const ok = failure === '' && speed >= 20 && r <= 4;
    table(
      `Whole-file analysis of a ${seconds.toFixed(1)} s stereo 16-bit recording, 5 steps, process start included, best and median of ${runs} runs (targets: ≥ 20× real time, ≤ 4× a bare pitchy pass)`,
      ['command', 'best ms', 'median ms', 'median CPU ms', 'speed', 'ratio', 'meets'],
      [
        [
          'spanmeter analyze --points',
          best(ours).toFixed(0),
          med(ours).toFixed(0),
          cpu(oursCpu),
          `${speed.toFixed(0)}×`,
          r.toFixed(2),
          ok ? 'yes' : 'NO',
        ],
        [
          'bare pitchy pass',
          best(theirs).toFixed(0),
          med(theirs).toFixed(0),
          cpu(theirsCpu),
          `${((seconds * 1000) / best(theirs)).toFixed(0)}×`,
          '1',
          '',
        ],
      ],
    );
    if (failure) console.log(`\nfailure: ${failure}`);
    return ok;
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

/** `npm run bench -- [--quick]`. Exit code 0 when every target is met, 1 otherwise. */
export async function main(args: string[]): Promise<number> {
  let quick = false;
  let only: Set<string> | null = null;
  for (let i = 0; i < args.length; i++) {
    const a = args[i];
    if (a === '--quick') quick = true;
    else if (a === '--only' && i + 1 < args.length) only = new Set(args[++i].split(','));
    else if (a === '--help' || a === '-h') {
      console.log(
        'usage: npm run bench -- [--quick] [--only CASES]\n  --quick  a smaller grid and fewer trials, for a first look\n' +
          '  --only   comma list of: clean, noise, hum, crb, live, uncertainty, throughput, recording, wrong-volts, droop, loop, dropouts, wander, tails, lfo, long, user',
      );
      return 0;
    } else throw new CliError(`unknown option '${a}' (try --help)`, 2);
  }
  const want = (name: string) => only === null || only.has(name);
  const t0 = performance.now();
  const shapes = quick ? (['saw', 'sine'] as Shape[]) : SHAPES;
  const rates = quick ? [48000] : RATES;
  const grid = quick ? [16.3516, 27.3, 261.6256, 987.7, 5111, 8372.018] : GRID;
  console.log(`# Spanmeter pitch engine bench (${new Date().toISOString()}, Node ${process.version})`);
  console.log(
    `\nMachine: ${cpus().length} × ${cpus()[0]?.model ?? 'unknown CPU'}, load average ${loadavg()
      .map((l) => l.toFixed(2))
      .join(' ')} at start.`,
  );
  console.log('\nErrors are in cents against the generating frequency; 1 s of signal unless stated.');
  console.log('pitchy: McLeod pitch method alone, 8192-sample windows, median over the second.');
  console.log('YIN: pitchfinder, 8192-sample windows, median of five over the second.');
  const results: [string, boolean][] = [];
  if (want('clean'))
    results.push(['clean', accuracyCase('Clean band-limited tones', '0.01', shapes, rates, grid, null)]);
  const noise40: Impair = (x, _fs, _f, seed) => void addNoise(x, 40, seed);
  const noise20: Impair = (x, _fs, _f, seed) => void addNoise(x, 20, seed);
  if (want('noise')) {
    results.push([
      '40 dB',
      accuracyCase('White noise at 40 dB SNR, 48 kHz', '0.01', shapes, [48000], grid, noise40),
    ]);
    results.push([
      '20 dB',
      accuracyCase('White noise at 20 dB SNR, 48 kHz', '0.1', shapes, [48000], grid, noise20, 30),
    ]);
  }
  for (const hum of want('hum') ? [50, 60] : []) {
    const humDc: Impair = (x, fs, _f, seed) => {
      addHum(x, hum, fs, -30);
      addDcStep(x, fs, 0, 0.05, 0.43);
      addNoise(x, 40, seed);
    };
    results.push([
      `hum ${hum}`,
      accuracyCase(
        `${hum} Hz mains hum (with 2nd and 3rd harmonics) at −30 dB, a DC step of 10 % of the peak, and 40 dB SNR, 48 kHz`,
        '0.01',
        shapes,
        [48000],
        grid,
        humDc,
      ),
    ]);
  }
  if (want('crb')) results.push(['CRB', crbCase(quick ? 10 : 40)]);
  if (want('live')) results.push(['live', liveCase(quick ? 2 : 4)]);
  if (want('uncertainty')) results.push(['uncertainty', coverageCase(quick ? 20 : 60)]);
  if (want('throughput')) results.push(['throughput', throughputCase(quick ? 5 : 20)]);
  if (want('recording')) results.push(['recording', recordingCase(quick ? 3 : 7)]);
  results.push(...modelBenchCases(want, quick));
  results.push(...(await import('./long.ts')).benchLong(want, quick));
  results.push(...integrityCases(quick, want));
  console.log('\n### Summary\n');
  for (const [name, ok] of results) console.log(`- ${name}: ${ok ? 'meets target' : 'MISSES target'}`);
  console.log(`\nBench time ${((performance.now() - t0) / 1000).toFixed(0)} s.`);
  return results.every(([, ok]) => ok) ? 0 : 1;
}
