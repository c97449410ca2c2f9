// The engine's seeded random generator: every draw of a check (inputs, upstream gradients,
// probe directions, subsets) comes from here, never from the context's Math.random.

import { U8, ceil, floor, imul } from './builtins';

/** A source of uniform numbers in [0, 1). Injectable: anything with this shape works. */
export type RandomSource = () => number;

/**
 * Weyl-sequence increment (2^32 / golden ratio) and the 32-bit finaliser of MurmurHash3, the
 * construction of SplitMix (Steele, Lea & Flood, "Fast splittable pseudorandom number
 * generators", OOPSLA 2014), cut down to 32-bit words so it needs no BigInt.
 */
const GOLDEN_GAMMA_32 = 0x9e3779b9;

function mix32(z: number): number {
  z = imul(z ^ (z >>> 16), 0x85ebca6b);
  z = imul(z ^ (z >>> 13), 0xc2b2ae35);
  return (z ^ (z >>> 16)) >>> 0;
}

/** Normalises any seed number to 32 bits (negative and fractional seeds map deterministically). */
export function seedToState(seed: number): number {
  if (seed !== seed) return 0;
  const lo = seed >>> 0;
  const hi = (seed / 4294967296) >>> 0; // seeds beyond 2^32 still differ
  return mix32(lo ^ mix32(hi + GOLDEN_GAMMA_32));
}

/**
 * Uniform doubles in [0, 1) with 53 random bits (two 32-bit outputs), so float64 samples are
 * not restricted to a 2^-32 grid.
 */
export function createRandom(seed: number): RandomSource {
  let state = seedToState(seed);
  // mix32 written out twice, not called: the same numbers with one call per draw instead of five,
  // which counts where the engine runs unoptimised (loaded into a fresh op context per check).
  return () => {
    state = (state + GOLDEN_GAMMA_32) | 0;
    let z = imul(state ^ (state >>> 16), 0x85ebca6b);
    z = imul(z ^ (z >>> 13), 0xc2b2ae35);
    const hi = (z ^ (z >>> 16)) >>> 5; // 27 bits
    state = (state + GOLDEN_GAMMA_32) | 0;
    z = imul(state ^ (state >>> 16), 0x85ebca6b);
    z = imul(z ^ (z >>> 13), 0xc2b2ae35);
    const lo = (z ^ (z >>> 16)) >>> 6; // 26 bits
    return (hi * 67108864 + lo) / 9007199254740992; // (hi·2^26 + lo) / 2^53
  };
}

/**
 * Fills `out` with uniform numbers in [-1, 1) from 32-bit draws (one mix per number, half the
 * cost of createRandom): for upstream vectors and probe directions, where only the spread
 * matters, not 53-bit resolution. The state comes from `random`, so the stream stays seeded.
 */
export function fillSigned(random: RandomSource, out: Float64Array): Float64Array {
  let state = (random() * 4294967296) | 0;
  for (let i = 0; i < out.length; i++) {
    state = (state + GOLDEN_GAMMA_32) | 0;
    let z = imul(state ^ (state >>> 16), 0x85ebca6b); // mix32, written out (see createRandom)
    z = imul(z ^ (z >>> 13), 0xc2b2ae35);
    out[i] = ((z ^ (z >>> 16)) >>> 0) / 2147483648 - 1;
  }
  return out;
}

/**
 * An independent stream derived from a seed and a stream number: the redraws after a kink and
 * the separate purposes of one check (inputs, upstream vectors, subsets) use different streams,
 * so adding a draw in one never shifts the numbers of another.
 */
export function substream(seed: number, stream: number, part = 0): RandomSource {
  const base = seedToState(seed);
  const s = mix32(base ^ mix32((stream >>> 0) + GOLDEN_GAMMA_32));
  // `part` separates the streams of one purpose for different parameters.
  return createRandom(part === 0 ? s : mix32(s ^ mix32((part >>> 0) * GOLDEN_GAMMA_32 + 1)));
}

/** Stream numbers of one check attempt; attempt a uses STREAM_STRIDE·a + purpose. */
export const STREAM = { inputs: 0, upstream: 1, directions: 2, subset: 3, structure: 4 } as const;
export const STREAM_STRIDE = 16;

/** Uniform in [lo, hi]. */
export function uniform(random: RandomSource, lo: number, hi: number): number {
  return lo + (hi - lo) * random();
}

/** Integer uniform in lo..hi inclusive. */
export function uniformInt(random: RandomSource, lo: number, hi: number): number {
  const a = ceil(lo);
  const b = floor(hi);
  if (b < a) return a;
  return a + floor(random() * (b - a + 1));
}

/** `count` distinct integers from 0..n-1 (Floyd's algorithm), in ascending order. */
export function distinctIndices(random: RandomSource, n: number, count: number): number[] {
  if (count >= n) {
    const all: number[] = [];
    for (let i = 0; i < n; i++) all[i] = i;
    return all;
  }
  // Floyd's algorithm with a byte per candidate (no Set: user code may replace it).
  const taken = new U8(n);
  for (let j = n - count; j < n; j++) {
    const t = floor(random() * (j + 1));
    taken[taken[t] === 1 ? j : t] = 1;
  }
  const out: number[] = [];
  for (let i = 0; i < n; i++) if (taken[i] === 1) out[out.length] = i;
  return out;
}
