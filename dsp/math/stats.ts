/**
 * Small statistics the uncertainty budget needs: Student's t distribution (its CDF and quantile), the
 * coverage factor for a level of confidence, and the Welch–Satterthwaite effective degrees of freedom.
 *
 * Sources: the t distribution's CDF through the regularised incomplete beta function (Abramowitz &
 * Stegun, "Handbook of Mathematical Functions", 26.5.27 and 26.7.1), evaluated by the modified Lentz
 * continued fraction (A&S 26.5.8); ln Γ by the Lanczos approximation (Lanczos 1964, g = 7, n = 9
 * coefficients as widely tabulated). The Welch–Satterthwaite formula and the coverage factor from
 * Student's t are JCGM 100:2008 (GUM) G.4.1 and G.3.
 */

const LANCZOS = [
  0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313, -176.61502916214059,
  12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7,
];

/** ln Γ(x) for x > 0 (Lanczos approximation, g = 7; relative error below 1e-13 for x ≥ 0.5). */
function lnGamma(x: number): number {
  if (x < 0.5) return Math.log(Math.PI / Math.sin(Math.PI * x)) - lnGamma(1 - x);
  const z = x - 1;
  let a = LANCZOS[0];
  const t = z + 7.5;
  for (let i = 1; i < 9; i++) a += LANCZOS[i] / (z + i);
  return 0.5 * Math.log(2 * Math.PI) + (z + 0.5) * Math.log(t) - t + Math.log(a);
}

/** Continued fraction of the incomplete beta function (A&S 26.5.8, modified Lentz). */
function betaContinuedFraction(a: number, b: number, x: number): number {
  const tiny = 1e-300;
  let c = 1;
  let d = 1 - ((a + b) * x) / (a + 1);
  if (Math.abs(d) < tiny) d = tiny;
  d = 1 / d;
  let h = d;
  for (let m = 1; m <= 500; m++) {
    const m2 = 2 * m;
    let aa = (m * (b - m) * x) / ((a + m2 - 1) * (a + m2));
    d = 1 + aa * d;
    if (Math.abs(d) < tiny) d = tiny;
    c = 1 + aa / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    h *= d * c;
    aa = (-(a + m) * (a + b + m) * x) / ((a + m2) * (a + m2 + 1));
    d = 1 + aa * d;
    if (Math.abs(d) < tiny) d = tiny;
    c = 1 + aa / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    const del = d * c;
    h *= del;
    if (Math.abs(del - 1) < 1e-15) break;
  }
  return h;
}

/** Regularised incomplete beta I_x(a, b) (A&S 26.5.8 with the symmetry 26.5.2). */
function incompleteBeta(x: number, a: number, b: number): number {
  if (x <= 0) return 0;
  if (x >= 1) return 1;
  const lbt = lnGamma(a + b) - lnGamma(a) - lnGamma(b) + a * Math.log(x) + b * Math.log(1 - x);
  const front = Math.exp(lbt);
  if (x < (a + 1) / (a + b + 2)) return (front * betaContinuedFraction(a, b, x)) / a;
  return 1 - (front * betaContinuedFraction(b, a, 1 - x)) / b;
}

function requireDof(dof: number): void {
  if (!(dof > 0) || Number.isNaN(dof)) {
    throw new RangeError(`dof must be a number greater than 0 (Infinity allowed), got ${dof}`);
  }
}

/** Standard normal CDF via the complementary error function (A&S 7.1.26 is too coarse; uses the t route). */
function normalQuantile(p: number): number {
  // Acklam's rational approximation refined by one Halley step on erfc is overkill here: bisection on
  // the CDF, Φ(x) = 0.5·erfc(−x/√2), with erfc from the continued fraction of the incomplete gamma.
  let lo = -40;
  let hi = 40;
  for (let i = 0; i < 200; i++) {
    const mid = (lo + hi) / 2;
    if (normalCdf(mid) < p) lo = mid;
    else hi = mid;
  }
  return (lo + hi) / 2;
}

/** Φ(x) from the large-ν limit of the t CDF, computed through erf's series/continued fraction. */
function normalCdf(x: number): number {
  // erf via A&S 7.1.5 series for |x| < 3, else the asymptotic complement through incomplete beta limit.
  const z = Math.abs(x) / Math.SQRT2;
  let erf: number;
  if (z < 3) {
    let sum = z;
    let term = z;
    for (let n = 1; n < 200; n++) {
      term *= (-z * z) / n;
      const add = term / (2 * n + 1);
      sum += add;
      if (Math.abs(add) < 1e-17 * Math.abs(sum)) break;
    }
    erf = (2 / Math.sqrt(Math.PI)) * sum;
  } else {
    // erfc(z) by its continued fraction (A&S 7.1.14), Lentz.
    const tiny = 1e-300;
    let f = z;
    let c = z;
    let d = 0;
    for (let n = 1; n < 300; n++) {
      const an = n / 2;
      d = z + an * d;
      d = Math.abs(d) < tiny ? 1 / tiny : 1 / d;
      c = z + an / c;
      if (Math.abs(c) < tiny) c = tiny;
      const del = c * d;
      f *= del;
      if (Math.abs(del - 1) < 1e-16) break;
    }
    erf = 1 - Math.exp(-z * z) / (Math.sqrt(Math.PI) * f);
  }
  return x >= 0 ? 0.5 * (1 + erf) : 0.5 * (1 - erf);
}

/**
 * Cumulative distribution of Student's t with `dof` degrees of freedom:
 * `P(T ≤ t) = 1 − ½·I_{ν/(ν+t²)}(ν/2, ½)` for t ≥ 0, symmetric below (A&S 26.7.1 with 26.5.27);
 * the standard normal CDF when `dof` is Infinity.
 *
 * @param t - Any finite number.
 * @param dof - Degrees of freedom, > 0 (non-integers allowed), or Infinity.
 * @returns Probability 0…1.
 * @throws RangeError when `dof` is not > 0 or `t` is not finite.
 * @example studentTCdf(2.2281, 10) // 0.975 0…
 */
export function studentTCdf(t: number, dof: number): number {
  requireDof(dof);
  if (!Number.isFinite(t)) throw new RangeError(`t must be a finite number, got ${t}`);
  if (dof === Infinity) return normalCdf(t);
  const tail = 0.5 * incompleteBeta(dof / (dof + t * t), dof / 2, 0.5);
  return t >= 0 ? 1 - tail : tail;
}

/**
 * Quantile of Student's t: the t with `P(T ≤ t) = p`, by bisection on {@link studentTCdf} to 1e-12
 * relative. Matches handbook tables (e.g. t₀.₉₇₅(10) = 2.228, GUM Table G.2).
 *
 * @param p - Probability, strictly between 0 and 1.
 * @param dof - Degrees of freedom, > 0, or Infinity (the normal quantile).
 * @throws RangeError for p outside (0, 1) or dof not > 0.
 * @example studentTQuantile(0.975, 10) // 2.2281…
 */
export function studentTQuantile(p: number, dof: number): number {
  if (!(p > 0 && p < 1)) throw new RangeError(`p must be a number strictly between 0 and 1, got ${p}`);
  requireDof(dof);
  if (dof === Infinity) return normalQuantile(p);
  if (p === 0.5) return 0;
  if (p < 0.5) return -studentTQuantile(1 - p, dof);
  let lo = 0;
  let hi = 1;
  while (studentTCdf(hi, dof) < p) {
    hi *= 2;
    if (hi > 1e12) return hi;
  }
  for (let i = 0; i < 200 && hi - lo > 1e-12 * hi; i++) {
    const mid = (lo + hi) / 2;
    if (studentTCdf(mid, dof) < p) lo = mid;
    else hi = mid;
  }
  return (lo + hi) / 2;
}

/**
 * Level of confidence of the GUM's k = 2 for a normal distribution: 95.45 % (JCGM 100:2008, G.1.3 and
 * Table G.1).
 */
export const COVERAGE_PROBABILITY = 0.9545;

/**
 * Coverage factor for an expanded uncertainty: `k = t_p(ν)` at p = 95.45 %, two-sided, with ν truncated to
 * the next lower integer (JCGM 100:2008, G.3.2, G.4.1 and Table G.2); 2.000 for infinite ν. With ν = 4 it is
 * 2.87, with ν = 10 it is 2.28 (GUM Table G.2).
 *
 * @param dof - Effective degrees of freedom, ≥ 1 (a smaller value is raised to 1), or Infinity.
 * @returns k, ≥ 2.
 * @throws RangeError when `dof` is not a number greater than 0.
 * @example coverageFactor(10) // 2.28…
 */
export function coverageFactor(dof: number): number {
  requireDof(dof);
  if (dof === Infinity || dof > 1e7) return 2;
  const nu = Math.max(1, Math.floor(dof));
  return studentTQuantile(0.5 + COVERAGE_PROBABILITY / 2, nu);
}

/**
 * Welch–Satterthwaite effective degrees of freedom of a combined standard uncertainty:
 * `ν_eff = u_c⁴ / Σ (u_i⁴/ν_i)` with `u_c² = Σ u_i²` (JCGM 100:2008, G.4.1, equation G.2b). Terms with
 * infinite ν (Type B estimates treated as exactly known) add nothing to the denominator; when every term
 * has infinite ν, so does the result.
 *
 * @param terms - Contributions `{ u, dof }`: u the contribution to the standard uncertainty (≥ 0, in any
 *   one unit, already multiplied by its sensitivity coefficient) and dof > 0 or Infinity.
 * @returns ν_eff, ≥ the smallest finite ν of a non-zero term, or Infinity.
 * @throws RangeError naming the first invalid term.
 * @example welchSatterthwaite([{ u: 1, dof: 4 }, { u: 1, dof: Infinity }]) // 16
 */
export function welchSatterthwaite(terms: readonly { readonly u: number; readonly dof: number }[]): number {
  let sum2 = 0;
  let denom = 0;
  terms.forEach((t, i) => {
    if (!Number.isFinite(t.u) || t.u < 0)
      throw new RangeError(`terms[${i}].u must be a finite number at least 0, got ${t.u}`);
    if (!(t.dof > 0))
      throw new RangeError(`terms[${i}].dof must be greater than 0 or Infinity, got ${t.dof}`);
    sum2 += t.u * t.u;
    if (Number.isFinite(t.dof)) denom += (t.u * t.u * t.u * t.u) / t.dof;
  });
  if (denom === 0 || sum2 === 0) return Infinity;
  return (sum2 * sum2) / denom;
}
