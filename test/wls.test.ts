import { describe, it, expect } from 'vitest';
import { weightedLeastSquares } from '../dsp/math/index.ts';

describe('weightedLeastSquares', () => {
  it('recovers an exact straight line and the textbook slope variance 1/Σw(x − x̄)²', () => {
    // Simple linear regression with known unit variances: var(slope) = 1/Σw(x − x̄)² (any statistics
    // text, e.g. Press et al., "Numerical Recipes", 3rd ed., §15.2, eq. 15.2.9).
    const x = [0, 1, 2, 3, 4];
    const y = x.map((v) => 3 - 0.5 * v);
    const w = [1, 1, 1, 1, 1];
    const s = weightedLeastSquares([x.map(() => 1), x], y, w)!;
    expect(s.beta[0]).toBeCloseTo(3, 12);
    expect(s.beta[1]).toBeCloseTo(-0.5, 12);
    expect(s.chiSquared).toBeLessThan(1e-20);
    expect(s.cov[1][1]).toBeCloseTo(1 / 10, 12); // Σ(x − 2)² = 10
    expect(s.cov[0][0]).toBeCloseTo(30 / (5 * 10), 12); // Σx²/(n·Σ(x − x̄)²), same source
  });

  it('says null for a singular design and names a column of the wrong length', () => {
    expect(
      weightedLeastSquares(
        [
          [1, 1, 1],
          [2, 2, 2],
        ],
        [1, 2, 3],
        [1, 1, 1],
      ),
    ).toBeNull();
    expect(() => weightedLeastSquares([[1, 1]], [1, 2, 3], [1, 1, 1])).toThrow(
      /columns\[0\] must have 3 values/,
    );
  });

  it('with no columns leaves y as the residuals', () => {
    const s = weightedLeastSquares([], [1, -2], [2, 1])!;
    expect(s.residuals).toEqual([1, -2]);
    expect(s.chiSquared).toBe(6);
  });
});
