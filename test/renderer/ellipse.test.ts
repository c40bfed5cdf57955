import { describe, expect, it } from 'vitest';
import { covarianceEllipse, ellipsePoints } from '../../renderer/src/lib/ellipse.js';

/** Mahalanobis distance of (x, y) from the origin under [[xx, xy], [xy, yy]], by the closed-form inverse. */
function mahalanobis(x: number, y: number, xx: number, xy: number, yy: number): number {
  const det = xx * yy - xy * xy;
  return Math.sqrt((yy * x * x - 2 * xy * x * y + xx * y * y) / det);
}

describe('covariance ellipses', () => {
  it('an axis-aligned covariance gives half-axes r·σ (bivariate normal, common practice)', () => {
    const e = covarianceEllipse(4, 0, 1, 2);
    expect(e.major).toBeCloseTo(4, 12);
    expect(e.minor).toBeCloseTo(2, 12);
    expect(e.angle).toBeCloseTo(0, 12);
  });

  it('a correlated covariance tilts to 45° with eigenvalues 1 ± ρ', () => {
    // [[1, 0.5], [0.5, 1]] has eigenvalues 1.5 and 0.5 on the diagonals (worked by hand).
    const e = covarianceEllipse(1, 0.5, 1, 1);
    expect(e.major).toBeCloseTo(Math.sqrt(1.5), 12);
    expect(e.minor).toBeCloseTo(Math.sqrt(0.5), 12);
    expect(e.angle).toBeCloseTo(Math.PI / 4, 12);
  });

  it('every drawn point sits at exactly the requested Mahalanobis distance', () => {
    const cases: [number, number, number][] = [
      [2.3, -0.7, 0.9],
      [0.2, 0.15, 3.1],
      [1, 0, 1],
      [5, 4.99, 5],
    ];
    for (const [xx, xy, yy] of cases) {
      for (const radius of [1, 2]) {
        const points = ellipsePoints(10, -3, covarianceEllipse(xx, xy, yy, radius), 36);
        expect(points).toHaveLength(37);
        for (const [x, y] of points) expect(mahalanobis(x - 10, y + 3, xx, xy, yy)).toBeCloseTo(radius, 6);
        expect(points[36][0]).toBeCloseTo(points[0][0], 12);
      }
    }
  });

  it('refuses matrices that are not covariances', () => {
    expect(() => covarianceEllipse(1, 2, 1, 1)).toThrow(/Not a covariance/);
    expect(() => covarianceEllipse(-1, 0, 1, 1)).toThrow(/Not a covariance/);
    expect(() => covarianceEllipse(1, Number.NaN, 1, 1)).toThrow(/finite/);
    expect(() => ellipsePoints(0, 0, covarianceEllipse(1, 0, 1, 1), 3)).toThrow(/at least 8/);
  });
});
