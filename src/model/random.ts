import { xoroshiro128plus } from 'pure-rand/generator/xoroshiro128plus';
import { uniformFloat64 } from 'pure-rand/distribution/uniformFloat64';
import { uniformInt } from 'pure-rand/distribution/uniformInt';
import type { JumpableRandomGenerator } from 'pure-rand/types/JumpableRandomGenerator';

/** A seeded stream of random numbers (pure-rand's xoroshiro128+). */
export interface RandomStream {
  /** Uniform in [0, 1). */
  float(): number;
  /** Uniform integer in [from, to], both included. */
  integer(from: number, to: number): number;
}

/**
 * Stream number `index` of a seed: the seed's generator jumped `index` times, so streams draw
 * from non-overlapping parts of one sequence and any of them can be replayed alone (on any
 * thread). The EM engine gives restart r streams 2r (initialisation) and 2r + 1 (re-seeding).
 */
export function restartStream(seed: number, index: number): RandomStream {
  const generator: JumpableRandomGenerator = xoroshiro128plus(seed | 0);
  for (let i = 0; i < index; i++) generator.jump();
  return {
    float: () => uniformFloat64(generator),
    integer: (from, to) => uniformInt(generator, from, to),
  };
}

/**
 * Indexes 0..count-1 of a uniform sample of min(count, size) items without replacement, in random
 * order (a partial Fisher–Yates shuffle drawing from `random`), so any prefix of it is itself a
 * uniform sample.
 */
export function uniformSampleIndexes(count: number, size: number, random: RandomStream): Int32Array {
  if (!Number.isInteger(count) || count < 0) throw new RangeError(`count must be a non-negative integer, got ${count}.`);
  if (!Number.isInteger(size) || size < 0) throw new RangeError(`size must be a non-negative integer, got ${size}.`);
  const take = Math.min(count, size);
  const order = new Int32Array(count);
  for (let i = 0; i < count; i++) order[i] = i;
  for (let i = 0; i < take; i++) {
    const j = random.integer(i, count - 1);
    const swap = order[i];
    order[i] = order[j];
    order[j] = swap;
  }
  return order.slice(0, take);
}
