/**
 * Density ellipses of a bivariate normal: the set of points at Mahalanobis distance r from the
 * mean is an ellipse whose axes are the covariance's eigenvectors, with half-lengths r·sqrt(λ).
 * r = 1 and r = 2 are the "1 and 2 standard deviation" contours drawn on the Segments scatter.
 */
export interface Ellipse {
  /** Half-lengths of the major and minor axes. */
  major: number;
  minor: number;
  /** Angle of the major axis against the x axis, radians in (-π/2, π/2]. */
  angle: number;
}

/** Eigen-decomposition of a symmetric 2×2 covariance [[xx, xy], [xy, yy]], in closed form. */
export function covarianceEllipse(xx: number, xy: number, yy: number, radius: number): Ellipse {
  if (![xx, xy, yy, radius].every(Number.isFinite)) throw new RangeError('Covariance entries and radius must be finite numbers.');
  if (xx < 0 || yy < 0 || xx * yy - xy * xy < -1e-12 * Math.max(1, xx * yy)) {
    throw new RangeError(`Not a covariance matrix (variances ${xx}, ${yy}, covariance ${xy}).`);
  }
  if (radius < 0) throw new RangeError(`Radius must not be negative, got ${radius}.`);
  const halfTrace = (xx + yy) / 2;
  const spread = Math.hypot((xx - yy) / 2, xy);
  const large = halfTrace + spread;
  const small = Math.max(0, halfTrace - spread);
  // atan2 of twice the angle is stable when the variances are equal or the covariance is 0.
  let angle = 0.5 * Math.atan2(2 * xy, xx - yy);
  if (angle <= -Math.PI / 2) angle += Math.PI;
  return { major: radius * Math.sqrt(large), minor: radius * Math.sqrt(small), angle };
}

/** Points around the ellipse centred on (cx, cy), closed (the last point repeats the first). */
export function ellipsePoints(cx: number, cy: number, ellipse: Ellipse, steps = 72): [number, number][] {
  if (!Number.isInteger(steps) || steps < 8) throw new RangeError(`Use at least 8 steps, got ${steps}.`);
  const cos = Math.cos(ellipse.angle);
  const sin = Math.sin(ellipse.angle);
  const points: [number, number][] = [];
  for (let i = 0; i <= steps; i++) {
    const t = (2 * Math.PI * i) / steps;
    const u = ellipse.major * Math.cos(t);
    const v = ellipse.minor * Math.sin(t);
    points.push([cx + u * cos - v * sin, cy + u * sin + v * cos]);
  }
  return points;
}
