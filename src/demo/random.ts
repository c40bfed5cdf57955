import { uniformFloat64 } from 'pure-rand/distribution/uniformFloat64';
import { xoroshiro128plus } from 'pure-rand/generator/xoroshiro128plus';
import type { RandomGenerator } from 'pure-rand/types/RandomGenerator';

/**
 * Seeded random draws for the demo generator. Every number the generator makes comes from one
 * of these, so the same seed gives the same files byte for byte.
 */
export class SeededRandom {
  private readonly generator: RandomGenerator;

  constructor(seed: number) {
    this.generator = xoroshiro128plus(mix32(seed));
    // xoroshiro's first outputs after a simple seed are close to each other; move past them.
    for (let i = 0; i < 8; i++) this.generator.next();
  }

  /** Uniform in [0, 1). */
  uniform(): number {
    return uniformFloat64(this.generator);
  }

  /** Uniform in [low, high). */
  between(low: number, high: number): number {
    return low + (high - low) * this.uniform();
  }

  /** Uniform whole number in [0, count). */
  index(count: number): number {
    return Math.floor(this.uniform() * count);
  }

  /** Standard normal (Box–Muller, one value per call to keep the stream simple). */
  normal(): number {
    const u1 = 1 - this.uniform(); // in (0, 1], so the log is finite
    const u2 = this.uniform();
    return Math.sqrt(-2 * Math.log(u1)) * Math.cos(2 * Math.PI * u2);
  }

  /** Log-normal multiplier with mean 1 and the given log-scale spread. */
  lognormalFactor(logSpread: number): number {
    return Math.exp(logSpread * this.normal() - (logSpread * logSpread) / 2);
  }

  /** Poisson count: Knuth's product method for small means, a rounded normal for large ones. */
  poisson(mean: number): number {
    if (mean <= 0) return 0;
    if (mean > 30) return Math.max(0, Math.round(mean + Math.sqrt(mean) * this.normal()));
    const limit = Math.exp(-mean);
    let count = 0;
    let product = this.uniform();
    while (product > limit) {
      count++;
      product *= this.uniform();
    }
    return count;
  }

  /** Index drawn with probability proportional to its weight (weights need not sum to 1). */
  weighted(weights: ArrayLike<number>, total = sumOf(weights)): number {
    let target = this.uniform() * total;
    for (let i = 0; i < weights.length; i++) {
      target -= weights[i];
      if (target < 0) return i;
    }
    return weights.length - 1;
  }
}

export function sumOf(values: ArrayLike<number>): number {
  let total = 0;
  for (let i = 0; i < values.length; i++) total += values[i];
  return total;
}

/** 32-bit integer hash (the MurmurHash3 finaliser) so nearby seeds give unrelated streams. */
export function mix32(value: number): number {
  let h = value | 0;
  h ^= h >>> 16;
  h = Math.imul(h, 0x85ebca6b);
  h ^= h >>> 13;
  h = Math.imul(h, 0xc2b2ae35);
  h ^= h >>> 16;
  return h | 0;
}

/** A seed for one named stream (e.g. one customer) derived from the run's seed. */
export function streamSeed(seed: number, stream: number): number {
  return mix32(Math.imul(mix32(seed) ^ 0x5bd1e995, 31) + Math.imul(stream + 1, 0x9e3779b9));
}
