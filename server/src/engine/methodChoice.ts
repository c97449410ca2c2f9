// Chooses how to check one parameter: probe a few elements to see which outputs they move,
// hypothesise a band structure of the Jacobian, and use grouped perturbations (Curtis, Powell &
// Reid 1974) when they need clearly fewer forward calls than one column per element; otherwise
// full columns, or the dot-product test for parameters above the large-parameter limit.

import { F64, abs, ceil, contains, floor, max, min } from './builtins';
import type { OpHarness } from './opHarness';
import type { ParamSlot } from './paramSlot';
import { centralStep } from './precision';
import { distinctIndices, type RandomSource } from './random';
import type { CheckSettings } from './settings';
import type { CheckMethod } from '../model/types';

/**
 * A band model of the Jacobian: element i moves only outputs j with
 * anchor(i) + lo ≤ j ≤ anchor(i) + hi, where anchor(i) = floor(i·m/n). Elements i and i + colours
 * (and any two with the same index modulo `colours`) never move the same output.
 */
export interface Structure {
  lo: number;
  hi: number;
  /** Number of colour classes (forward pairs needed). */
  colours: number;
  /**
   * Block size when the Jacobian is block diagonal with square blocks of this size (a softmax
   * over rows): element i moves exactly outputs of block floor(i/block), so `block` colours
   * suffice where the band model needs 2·block − 1. 0 for the band model.
   */
  block?: number;
  n: number;
  m: number;
}

/**
 * Elements probed singly to learn the structure: the first, the last, STRUCTURE_SPACED_PROBES
 * evenly spaced ones (the offset of a band from the anchor drifts slowly along the parameter,
 * e.g. in a 'valid' convolution, and evenly spaced probes see the whole drift) and
 * STRUCTURE_RANDOM_PROBES random ones.
 */
export const STRUCTURE_SPACED_PROBES = 4;
export const STRUCTURE_RANDOM_PROBES = 2;
/** Times a violated band is widened (by half its width on each side) before giving up on grouping. */
export const GROUPED_WIDENINGS = 2;
/** Parameters this small get full columns without probing (probing would cost about as much). */
export const STRUCTURE_MIN_ELEMENTS = 12;
/** Grouping is used only when it needs at most this share of the full check's columns. */
export const GROUPED_MAX_SHARE = 0.5;

/**
 * Exact schemes that need more forward calls than this give way to dot-product probes with
 * splitting (splitSearch.ts): ROOT_PROBES probes cost about 6–10 forward calls each, and locating
 * one wrong element about two probes per halving. Our choice, from the benchmark: a dense
 * 1000×1000 W needs 2,000 calls grouped, a passing probe check about 60.
 */
export const PROBE_SWITCH_CALLS = 256;
/**
 * When a joint probe of STRUCTURE_SPACED_PROBES + 2 elements moves every one of at least this
 * many outputs, the Jacobian is taken as dense and no single probes are spent on a band (our
 * choice: with fewer outputs the single probes are cheap anyway).
 */
export const DENSE_MIN_OUTPUTS = 64;

export function anchorOf(i: number, n: number, m: number): number {
  return floor((i * m) / n);
}

/**
 * Smallest colour count C with anchor(i + C) − anchor(i) ≥ width for all i, or 0 when above
 * maxColours. anchor(i + C) − anchor(i) ≥ floor(C·m/n), so C = ceil((width + 1)·n/m) always
 * works; C = ceil(width·n/m) is tried first because it often does too.
 */
export function colourCount(n: number, m: number, width: number, maxColours: number): number {
  const tight = max(1, ceil((width * n) / m));
  const safe = max(1, ceil(((width + 1) * n) / m));
  // Two candidates by index, not `for ... of` over an array: user code may replace the array iterator.
  for (let k = 0; k < 2; k++) {
    const c = k === 0 ? tight : safe;
    if (k === 1 && safe === tight) break;
    if (c > maxColours) return 0;
    let ok = true;
    for (let i = 0; i + c < n; i++) {
      if (anchorOf(i + c, n, m) - anchorOf(i, n, m) < width) {
        ok = false;
        break;
      }
    }
    if (ok) return c;
  }
  return 0;
}

/**
 * One forward call with STRUCTURE_SPACED_PROBES + 2 evenly spaced elements moved together (fewer,
 * down to JOINT_MIN_PROBES, when their anchors would lie under 8 outputs apart): each moved output is credited to the probe with the nearest anchor. The band is accepted only
 * when it is narrower than a quarter of the distance between probe anchors, so the clusters of
 * moved outputs cannot have been confused; otherwise null (and the elements are probed singly).
 */
export function probeBandJointly(h: OpHarness, slot: ParamSlot, y0: Float64Array): { lo: number; hi: number; block?: number; dense?: boolean } | null {
  const n = slot.size;
  const m = y0.length;
  // Fewer probes (down to JOINT_MIN_PROBES) when the outputs are too few for all of them to lie
  // 8 anchors apart: one call instead of eight single probes for a 33-element diagonal.
  let count = STRUCTURE_SPACED_PROBES + 2;
  while (count > JOINT_MIN_PROBES && !(jointSpacing(count, n, m) >= 8)) count--;
  const probes: number[] = [];
  for (let q = 0; q < count; q++) probes[q] = floor((q * (n - 1)) / (count - 1));
  const anchors: number[] = [];
  for (let q = 0; q < count; q++) anchors[q] = anchorOf(probes[q], n, m);
  const spacing = jointSpacing(count, n, m);
  if (!(spacing >= 8)) return null;
  const saved: number[] = [];
  const out = new F64(m);
  h.forwardMoved(
    slot,
    0,
    true,
    () => {
      for (let q = 0; q < count; q++) {
        saved[q] = slot.get(probes[q]);
        slot.set(probes[q], saved[q] + centralStep(slot.precision, saved[q]));
      }
    },
    () => {
      for (let q = 0; q < count; q++) slot.set(probes[q], saved[q]);
    },
    out,
    true,
  );
  let lo = Infinity;
  let hi = -Infinity;
  let q = 0;
  let moved = 0;
  for (let j = 0; j < m; j++) {
    if (out[j] === y0[j]) continue;
    moved++;
    while (q + 1 < count && abs(anchors[q + 1] - j) < abs(anchors[q] - j)) q++;
    lo = min(lo, j - anchors[q]);
    hi = max(hi, j - anchors[q]);
  }
  // Every output moved: a dense Jacobian (a softmax over everything), no band to find.
  if (moved === m && m >= DENSE_MIN_OUTPUTS) return { lo: -m, hi: m, dense: true };
  if (!(lo <= hi)) return null;
  if (!(hi - lo + 1 <= spacing / 4)) return null;
  return { lo, hi, block: blockOf(out, y0, probes, anchors, n, m) };
}

/**
 * Fewest probes of a joint structure probe (first, middle, last): fewer would leave the
 * parameter's middle unseen (our choice).
 */
export const JOINT_MIN_PROBES = 3;

/** Smallest distance between the anchors of `count` evenly spaced probes of n elements. */
function jointSpacing(count: number, n: number, m: number): number {
  let spacing = Infinity;
  let prev = anchorOf(0, n, m);
  for (let q = 1; q < count; q++) {
    const a = anchorOf(floor((q * (n - 1)) / (count - 1)), n, m);
    spacing = min(spacing, a - prev);
    prev = a;
  }
  return spacing;
}

/**
 * Block size B when every probe's moved outputs fill exactly its own block
 * [B·floor(i/B), B·floor(i/B) + B) with B dividing n = m; 0 otherwise. Outputs are credited to
 * the probe with the nearest anchor, as in probeBandJointly.
 */
function blockOf(out: Float64Array, y0: Float64Array, probes: number[], anchors: number[], n: number, m: number): number {
  if (n !== m) return 0;
  const count = probes.length;
  const los: number[] = [];
  const his: number[] = [];
  for (let q = 0; q < count; q++) {
    los[q] = Infinity;
    his[q] = -Infinity;
  }
  let q = 0;
  for (let j = 0; j < m; j++) {
    if (out[j] === y0[j]) continue;
    while (q + 1 < count && abs(anchors[q + 1] - j) < abs(anchors[q] - j)) q++;
    los[q] = min(los[q], j);
    his[q] = max(his[q], j);
  }
  const B = his[0] - los[0] + 1;
  if (!(B >= 2) || n % B !== 0) return 0;
  for (let p = 0; p < count; p++) {
    const start = B * floor(probes[p] / B);
    // Every output of the block moved, none outside it.
    if (los[p] !== start || his[p] !== start + B - 1) return 0;
    let moved = 0;
    for (let j = start; j < start + B; j++) if (out[j] !== y0[j]) moved++;
    if (moved !== B) return 0;
  }
  return B;
}

/**
 * Probes elements one at a time (one forward each, at x + h·e_i) and records which outputs moved
 * relative to y0. Returns the band of offsets from the anchor, or null when nothing moved; with
 * `block` when every probe moved exactly the outputs of its own block (see singleBlock).
 */
export function probeBand(h: OpHarness, slot: ParamSlot, y0: Float64Array, random: RandomSource): { lo: number; hi: number; block?: number } | null {
  const n = slot.size;
  const m = y0.length;
  const probes: number[] = [0, n - 1];
  const add = (i: number): void => {
    if (!contains(probes, i)) probes[probes.length] = i;
  };
  for (let q = 1; q <= STRUCTURE_SPACED_PROBES; q++) add(floor((q * n) / (STRUCTURE_SPACED_PROBES + 1)));
  const picks = distinctIndices(random, n - 2, STRUCTURE_RANDOM_PROBES);
  for (let q = 0; q < picks.length; q++) add(picks[q] + 1);
  const out = new F64(m);
  let lo = Infinity;
  let hi = -Infinity;
  // The block every probe so far moved exactly (its size; 0 once one did not, -1 before the first).
  let block = n === m ? -1 : 0;
  for (let q = 0; q < probes.length; q++) {
    const i = probes[q];
    const x0 = slot.get(i);
    h.forwardAtElement(slot, i, x0 + centralStep(slot.precision, x0), out, true);
    const a = anchorOf(i, n, m);
    let first = -1;
    let last = -1;
    let moved = 0;
    for (let j = 0; j < m; j++) {
      if (out[j] !== y0[j]) {
        lo = min(lo, j - a);
        hi = max(hi, j - a);
        if (first < 0) first = j;
        last = j;
        moved++;
      }
    }
    if (block !== 0) block = singleBlock(i, first, last, moved, n, block < 0 ? last - first + 1 : block);
  }
  if (!(lo <= hi)) return null;
  return block > 0 ? { lo, hi, block } : { lo, hi };
}

/**
 * B when element i (probed alone) moved exactly the B outputs of its own block
 * [B·floor(i/B), B·floor(i/B) + B), every one of them, with B ≥ 2 dividing n and at most
 * GROUPED_MAX_SHARE of n; else 0. Probed
 * singly, an element's outputs cannot be confused with another's, so the block model holds for
 * every probe seen, however wide the blocks are against the probes' spacing (a 10-class row
 * softmax of 10 rows, where the joint probe cannot tell the blocks apart).
 */
function singleBlock(i: number, first: number, last: number, moved: number, n: number, B: number): number {
  // One block of every element is a dense Jacobian: grouping must save calls (GROUPED_MAX_SHARE).
  if (!(B >= 2) || n % B !== 0 || B > n * GROUPED_MAX_SHARE) return 0;
  const start = B * floor(i / B);
  return first === start && last === start + B - 1 && moved === B ? B : 0;
}

/** The band widened by half its width on each side, or null when grouping would no longer pay. */
export function widened(st: Structure): Structure | null {
  // A block model that failed is not widened: the band model of the same op covers it.
  if (st.block) return bandOf(st);
  const grow = max(1, ceil((st.hi - st.lo + 1) / 2));
  const lo = st.lo - grow;
  const hi = st.hi + grow;
  const colours = colourCount(st.n, st.m, hi - lo + 1, floor(st.n * GROUPED_MAX_SHARE));
  return colours === 0 ? null : { lo, hi, colours, n: st.n, m: st.m };
}

export function chooseMethod(h: OpHarness, slot: ParamSlot, y0: Float64Array, settings: CheckSettings, random: RandomSource): { method: CheckMethod; structure: Structure | null } {
  const n = slot.size;
  const m = y0.length;
  // Above the large-parameter limit, or when one column per element costs more than probing.
  const fallback: CheckMethod = n > settings.largeParamElements || 2 * n > PROBE_SWITCH_CALLS ? 'dot-product' : 'full';
  if (n < STRUCTURE_MIN_ELEMENTS) return { method: 'full', structure: null };
  const band: { lo: number; hi: number; block?: number; dense?: boolean } = probeBandJointly(h, slot, y0) ?? probeBand(h, slot, y0, random) ?? { lo: 0, hi: 0 };
  if (band.dense) return { method: fallback, structure: null };
  if (band.block && 2 * band.block <= PROBE_SWITCH_CALLS) {
    return { method: 'grouped', structure: { lo: band.lo, hi: band.hi, colours: band.block, n, m, block: band.block } };
  }
  const width = band.hi - band.lo + 1;
  const colours = colourCount(n, m, width, floor(n * GROUPED_MAX_SHARE));
  if (colours === 0) return { method: fallback, structure: null };
  // Grouping that needs more calls than the probes gives way to them, as does a full check.
  if (2 * colours > PROBE_SWITCH_CALLS) return { method: 'dot-product', structure: null };
  return { method: 'grouped', structure: { lo: band.lo, hi: band.hi, colours, n, m } };
}

/** The band model of a failed block model (same band, its own colour count), or null. */
function bandOf(st: Structure): Structure | null {
  const colours = colourCount(st.n, st.m, st.hi - st.lo + 1, floor(st.n * GROUPED_MAX_SHARE));
  return colours === 0 || 2 * colours > PROBE_SWITCH_CALLS ? null : { lo: st.lo, hi: st.hi, colours, n: st.n, m: st.m };
}
