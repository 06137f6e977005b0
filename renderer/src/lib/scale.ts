/**
 * Axis ranges and ticks for the charts: round numbers at 1, 2 or 5 times a power of ten.
 */

/**
 * Tick values from `lo` to `hi`, about `count` of them, at a 1-2-5 step.
 *
 * @example ticks(0, 10, 5) // [0, 2, 4, 6, 8, 10]
 */
export function ticks(lo: number, hi: number, count: number): number[] {
  if (!Number.isFinite(lo) || !Number.isFinite(hi) || hi <= lo || count < 1) return [];
  const raw = (hi - lo) / count;
  const p = Math.pow(10, Math.floor(Math.log10(raw)));
  const m = raw / p;
  const step = (m <= 1 ? 1 : m <= 2 ? 2 : m <= 5 ? 5 : 10) * p;
  const out: number[] = [];
  for (let v = Math.ceil(lo / step) * step; v <= hi + step * 1e-9; v += step) {
    out.push(Math.abs(v) < step * 1e-9 ? 0 : Number(v.toPrecision(12)));
  }
  return out;
}

/**
 * A symmetric-enough range around zero that holds every finite value, at least ±`minHalf`, widened to
 * a round number.
 *
 * @example niceRange([0.4, -1.3], 1) // [-2, 2]
 */
export function niceRange(values: readonly number[], minHalf: number): [number, number] {
  const finite = values.filter((v) => Number.isFinite(v));
  let lo = Math.min(-minHalf, ...finite);
  let hi = Math.max(minHalf, ...finite);
  const span = hi - lo;
  const p = Math.pow(10, Math.floor(Math.log10(span / 4)));
  const step = [1, 2, 5, 10].map((k) => k * p).find((s) => span / s <= 6) ?? 10 * p;
  lo = Math.floor(lo / step) * step;
  hi = Math.ceil(hi / step) * step;
  return [lo, hi];
}
