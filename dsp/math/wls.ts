/**
 * Weighted linear least squares, the one solver the tracking model and the converter's HF fits share.
 *
 * Method: the normal equations `(XᵀWX)β = XᵀWy` with each column scaled to unit RMS, inverted by
 * Gauss–Jordan elimination with partial pivoting (any numerical-analysis text, e.g. W. H. Press et al.,
 * "Numerical Recipes", 3rd ed., 2007, §2.1 and §15.4). The covariance of β for unit-variance weights is
 * `(XᵀWX)⁻¹` (§15.4.2); the gain `(XᵀWX)⁻¹XᵀW` maps each observation to the parameters, so β = gain·y and
 * the sensitivity of β to observation i is column i of the gain (JCGM 100:2008 (GUM) 5.1.3).
 */

/** The result of {@link weightedLeastSquares}. */
export interface WeightedLeastSquares {
  /** Parameters, one per column. */
  readonly beta: number[];
  /** `(XᵀWX)⁻¹`, p×p: the covariance of `beta` when the weights are inverse variances. */
  readonly cov: number[][];
  /** `(XᵀWX)⁻¹XᵀW`, p×n: ∂beta_j/∂y_i. */
  readonly gain: number[][];
  /** `y − Xβ`, in the units of y. */
  readonly residuals: number[];
  /** `Σ w·residual²`. */
  readonly chiSquared: number;
}

/**
 * Fits `y ≈ Xβ` by weighted least squares (see the module note for the method and its source).
 *
 * @param columns - The design matrix by columns: p columns of n values each (p may be 0).
 * @param y - Observations, n values.
 * @param w - Weights, n values ≥ 0 (inverse variances for a meaningful `cov`).
 * @param relativePivot - A pivot smaller than this times the largest diagonal of XᵀWX (scaled) counts as
 *   singular. Default 1e-13.
 * @returns The fit, or null when the design is singular.
 * @throws RangeError when a column or the weights differ in length from `y`.
 * @example
 * weightedLeastSquares([[1, 1, 1], [0, 1, 2]], [1, 3, 5], [1, 1, 1])?.beta // ≈ [1, 2]
 */
export function weightedLeastSquares(
  columns: readonly (readonly number[])[],
  y: readonly number[],
  w: readonly number[],
  relativePivot = 1e-13,
): WeightedLeastSquares | null {
  const p = columns.length;
  const n = y.length;
  if (w.length !== n) throw new RangeError(`w must have ${n} values (one per observation), got ${w.length}`);
  columns.forEach((c, j) => {
    if (c.length !== n)
      throw new RangeError(`columns[${j}] must have ${n} values (one per observation), got ${c.length}`);
  });
  const scale = columns.map((c) => {
    let s = 0;
    for (const x of c) s += x * x;
    const r = Math.sqrt(s / n);
    return r > 0 ? r : 1;
  });
  // [A | I] with A = ZᵀWZ, Z the scaled columns; elimination leaves [I | A⁻¹].
  const m: number[][] = [];
  for (let j = 0; j < p; j++) {
    const row = new Array<number>(2 * p).fill(0);
    for (let k = 0; k < p; k++) {
      let s = 0;
      for (let i = 0; i < n; i++) s += (w[i] * columns[j][i] * columns[k][i]) / (scale[j] * scale[k]);
      row[k] = s;
    }
    row[p + j] = 1;
    m.push(row);
  }
  let maxDiag = 0;
  for (let j = 0; j < p; j++) maxDiag = Math.max(maxDiag, Math.abs(m[j][j]));
  for (let c = 0; c < p; c++) {
    let piv = c;
    for (let r = c + 1; r < p; r++) if (Math.abs(m[r][c]) > Math.abs(m[piv][c])) piv = r;
    if (!(Math.abs(m[piv][c]) > relativePivot * maxDiag)) return null;
    [m[c], m[piv]] = [m[piv], m[c]];
    const d = m[c][c];
    for (let k = 0; k < 2 * p; k++) m[c][k] /= d;
    for (let r = 0; r < p; r++) {
      if (r === c) continue;
      const fct = m[r][c];
      if (fct === 0) continue;
      for (let k = 0; k < 2 * p; k++) m[r][k] -= fct * m[c][k];
    }
  }
  const cov = m.map((row, j) => row.slice(p).map((x, k) => x / (scale[j] * scale[k])));
  const gain = cov.map((row) => {
    const g = new Array<number>(n).fill(0);
    for (let i = 0; i < n; i++) {
      let s = 0;
      for (let k = 0; k < p; k++) s += row[k] * columns[k][i];
      g[i] = s * w[i];
    }
    return g;
  });
  const beta = gain.map((g) => {
    let s = 0;
    for (let i = 0; i < n; i++) s += g[i] * y[i];
    return s;
  });
  const residuals = new Array<number>(n);
  let chiSquared = 0;
  for (let i = 0; i < n; i++) {
    let fit = 0;
    for (let j = 0; j < p; j++) fit += columns[j][i] * beta[j];
    residuals[i] = y[i] - fit;
    chiSquared += w[i] * residuals[i] * residuals[i];
  }
  return { beta, cov, gain, residuals, chiSquared };
}
