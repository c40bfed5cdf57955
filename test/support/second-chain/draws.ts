/**
 * Seeded draws for the second test chain, on pure-rand's xoroshiro128+. A master stream hands each
 * customer a 32-bit seed of a stream of its own, so how many draws one customer needs never shifts
 * another customer's numbers.
 */
import { uniformFloat64 } from 'pure-rand/distribution/uniformFloat64';
import { uniformInt } from 'pure-rand/distribution/uniformInt';
import { xoroshiro128plus } from 'pure-rand/generator/xoroshiro128plus';
import type { RandomGenerator } from 'pure-rand/types/RandomGenerator';

export class Draws {
  private readonly source: RandomGenerator;
  /** Second normal of the last polar pair, kept for the next call. */
  private spareNormal: number | null = null;

  constructor(seed: number) {
    this.source = xoroshiro128plus(seed | 0);
  }

  /** Uniform in [0, 1). */
  unit(): number {
    return uniformFloat64(this.source);
  }

  /** Uniform whole number in [from, to], both included. */
  wholeBetween(from: number, to: number): number {
    return uniformInt(this.source, from, to);
  }

  /** A fresh 32-bit seed for a child stream. */
  childSeed(): number {
    return uniformInt(this.source, -0x80000000, 0x7fffffff);
  }

  /** True with the given probability. */
  chance(probability: number): boolean {
    return this.unit() < probability;
  }

  /** Standard normal by Marsaglia's polar method (pairs; the second is kept for the next call). */
  standardNormal(): number {
    if (this.spareNormal !== null) {
      const value = this.spareNormal;
      this.spareNormal = null;
      return value;
    }
    let x: number;
    let y: number;
    let radiusSquared: number;
    do {
      x = 2 * this.unit() - 1;
      y = 2 * this.unit() - 1;
      radiusSquared = x * x + y * y;
    } while (radiusSquared >= 1 || radiusSquared === 0);
    const scale = Math.sqrt((-2 * Math.log(radiusSquared)) / radiusSquared);
    this.spareNormal = y * scale;
    return x * scale;
  }

  /** Log-normal with the given median and log-scale standard deviation (right-skewed). */
  logNormal(median: number, logSd: number): number {
    return median * Math.exp(logSd * this.standardNormal());
  }

  /**
   * Gamma with the given shape and mean (scale = mean / shape): Marsaglia and Tsang (2000), "A simple
   * method for generating gamma variables", ACM TOMS 26(3); shapes below 1 by the usual boost
   * (draw at shape + 1, multiply by U^(1/shape)).
   */
  gamma(shape: number, mean: number): number {
    if (!(shape > 0) || !(mean > 0)) throw new RangeError(`gamma needs a positive shape and mean; got ${shape}, ${mean}`);
    const boost = shape < 1 ? Math.pow(this.unit() || Number.MIN_VALUE, 1 / shape) : 1;
    const d = (shape < 1 ? shape + 1 : shape) - 1 / 3;
    const c = 1 / Math.sqrt(9 * d);
    for (;;) {
      const z = this.standardNormal();
      const v0 = 1 + c * z;
      if (v0 <= 0) continue;
      const v = v0 * v0 * v0;
      const u = this.unit();
      if (Math.log(u || Number.MIN_VALUE) < 0.5 * z * z + d - d * v + d * Math.log(v)) return (d * v * boost * mean) / shape;
    }
  }

  /** Waiting time of a Poisson process with the given rate (events per unit of time). */
  exponential(rate: number): number {
    return -Math.log(1 - this.unit()) / rate;
  }

  /** An index chosen with probability proportional to its weight. */
  pick(weights: readonly number[]): number {
    let total = 0;
    for (const weight of weights) total += weight;
    let remaining = this.unit() * total;
    for (let index = 0; index < weights.length - 1; index++) {
      remaining -= weights[index];
      if (remaining < 0) return index;
    }
    return weights.length - 1;
  }
}
