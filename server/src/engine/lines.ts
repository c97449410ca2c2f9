// Moving the inputs along a line — one element, or a whole parameter along a direction — in
// place, evaluating the forward there, and restoring; plus the projections of output
// differences onto upstream vectors that every difference quotient of the engine uses.

import { F64, abs, copyFloats, max, min, typedLength } from './builtins';
import type { ForwardMap } from './forwardMap';
import type { ParamSlot } from './paramSlot';
import { centralStep, relativeStep } from './precision';
import { RIDDERS_INITIAL_STEP } from './ridders';
import { distanceToBarrier } from './sampling';

/** A one-dimensional path x(t) through the input space, starting at the sample point. */
export interface Line {
  /**
   * Moves to x(t), runs the forward into out, moves back. Returns the displacement actually
   * taken (the stored value minus the start, for an element) or NaN when the output is not finite.
   */
  evalAt(t: number, out: Float64Array): number;
  /** Central step of the line (Nocedal & Wright §8.1), in t units. */
  readonly centralStep: number;
  /** Largest step that keeps inside the sampled range and away from avoid points. */
  readonly maxStep: number;
  /** Ridders' initial step for this line (capped by maxStep). */
  readonly refineStep: number;
  /** The slot moved and, for an element line, the element (for messages). */
  readonly slot: ParamSlot;
  readonly element: number;
}

/** A range line (rangeLine) with the central pair of a probe taken in one go. */
export interface RangeLine extends Line {
  /**
   * Evaluates x(t) into plus and x(−t) into minus, moving from +t straight to −t, and leaves the
   * parameter at x(−t): the caller calls restore() once after its last pair (in a finally), so
   * a probe of a million elements writes them twice per pair, not three times. Does not check
   * the outputs for finiteness (centralProjection does, in its own pass over them).
   */
  pairAt(t: number, plus: Float64Array, minus: Float64Array): void;
  /** Moves the range back to the sample point. */
  restore(): void;
}

function isFiniteVector(v: Float64Array): boolean {
  for (let j = 0; j < v.length; j++) {
    const x = v[j];
    if (x - x !== 0) return false;
  }
  return true;
}

/**
 * Smallest cap of refinement steps relative to the central step: when an element sits right at
 * a range end or avoid point, refinement still uses steps of at least this many central steps.
 */
const MIN_REFINE_STEPS = 4;

/** The line through element i of a slot: x(t) = x + t·e_i. */
export function elementLine(h: ForwardMap, slot: ParamSlot, i: number): Line {
  const x0 = slot.get(i);
  const hc = centralStep(slot.precision, x0);
  const barrier = distanceToBarrier(slot, x0);
  const maxStep = max(barrier * 0.9, MIN_REFINE_STEPS * hc);
  const scale = max(1, abs(x0));
  return {
    slot,
    element: i,
    centralStep: hc,
    maxStep,
    refineStep: min(RIDDERS_INITIAL_STEP * scale, maxStep),
    evalAt(t: number, out: Float64Array): number {
      const stored = h.forwardAtElement(slot, i, x0 + t, out, false);
      return isFiniteVector(out) ? stored - x0 : NaN;
    },
  };
}

/**
 * The line through a whole slot along direction d scaled per element by max(1, |x_i|), so the
 * step is relative for every element: x_i(t) = x_i + t·d_i·max(1, |x_i|).
 */
export function directionLine(h: ForwardMap, slot: ParamSlot, d: Float64Array): Line & { scaled: Float64Array } {
  const n = slot.size;
  const x0 = slot.snapshot();
  const scaled = new F64(n);
  let maxStep = Infinity;
  const barriers = slot.avoid.length > 0 || (slot.range !== null && slot.range[0] < slot.range[1]);
  for (let i = 0; i < n; i++) {
    const x = x0[i];
    scaled[i] = d[i] * (x > 1 ? x : x < -1 ? -x : 1);
    if (barriers && scaled[i] !== 0) {
      const b = distanceToBarrier(slot, x);
      if (b < Infinity) maxStep = min(maxStep, (b * 0.9) / abs(scaled[i]));
    }
  }
  const hc = relativeStep(slot.precision);
  maxStep = max(maxStep, MIN_REFINE_STEPS * hc);
  return {
    slot,
    element: -1,
    scaled,
    centralStep: hc,
    maxStep,
    refineStep: min(RIDDERS_INITIAL_STEP, maxStep),
    evalAt(t: number, out: Float64Array): number {
      const typed = slot.typed;
      h.forwardMoved(
        slot,
        0,
        true,
        () => {
          if (typed !== null) moveRange(typed, x0, scaled, 0, 0, n, t);
          else for (let i = 0; i < n; i++) slot.set(i, x0[i] + t * scaled[i]);
        },
        () => {
          if (typed !== null) restoreRange(typed, x0, 0, n);
          else for (let i = 0; i < n; i++) slot.set(i, x0[i]);
        },
        out,
        false,
      );
      return isFiniteVector(out) ? t : NaN;
    },
  };
}

/** ⟨w, a − b⟩ for each upstream vector w (K projections of one output difference). */
export function projectDifference(ws: Float64Array[], a: Float64Array, b: Float64Array, out: Float64Array): Float64Array {
  const m = a.length;
  for (let k = 0; k < ws.length; k++) {
    const w = ws[k];
    let s = 0;
    for (let j = 0; j < m; j++) s += w[j] * (a[j] - b[j]);
    out[k] = s;
  }
  return out;
}

/**
 * Σ_j |w_j|·(|a_j| + |b_j|) over the outputs that differ, for each w: the magnitude behind a
 * projected difference's roundoff (outputs that did not move add no roundoff to it).
 */
export function projectMagnitude(ws: Float64Array[], a: Float64Array, b: Float64Array, out: Float64Array): Float64Array {
  const m = a.length;
  for (let k = 0; k < ws.length; k++) {
    const w = ws[k];
    let s = 0;
    for (let j = 0; j < m; j++) if (a[j] !== b[j]) s += abs(w[j]) * (abs(a[j]) + abs(b[j]));
    out[k] = s;
  }
  return out;
}

/**
 * Central difference quotients of every projection along a line at step t, or null when the
 * forward is not finite at x(±t). Buffers are the caller's, reused across calls.
 */
export function centralOnLine(line: Line, ws: Float64Array[], t: number, plus: Float64Array, minus: Float64Array): Float64Array | null {
  const sp = line.evalAt(t, plus);
  if (sp !== sp) return null;
  const sm = line.evalAt(-t, minus);
  if (sm !== sm) return null;
  const denom = sp - sm;
  const out = projectDifference(ws, plus, minus, new F64(ws.length));
  for (let k = 0; k < out.length; k++) out[k] /= denom;
  return out;
}

/** Per-element figures of a slot that every range line reuses (computed once per parameter). */
export interface SlotGeometry {
  /** The values at the sample point. */
  x0: Float64Array;
  /**
   * Element i's displacement per unit t: max(1, |x_i|), shrunk for an element near a barrier
   * (range end or avoid point) so that it stays inside up to t = RIDDERS_INITIAL_STEP. One
   * element near the edge of the sampled range must not force a million-element probe to tiny
   * steps, where roundoff swamps it; any direction serves the adjoint identity.
   */
  scale: Float64Array;
}

export function slotGeometry(slot: ParamSlot): SlotGeometry {
  const n = slot.size;
  const x0 = slot.snapshot();
  const scale = new F64(n);
  const barriers = slot.avoid.length > 0 || (slot.range !== null && slot.range[0] < slot.range[1]);
  // Never below MIN_REFINE_STEPS central steps at the initial step, as for single elements.
  const least = (MIN_REFINE_STEPS * relativeStep(slot.precision)) / RIDDERS_INITIAL_STEP;
  const range = slot.range;
  if (slot.avoid.length === 0 && range !== null && range[0] < range[1]) {
    // The common case (a sampled range, no avoid points): distanceToBarrier inlined.
    rangeScales(x0, scale, range[0], range[1], least);
    return { x0, scale };
  }
  for (let i = 0; i < n; i++) {
    const x = x0[i];
    const c = x > 1 ? x : x < -1 ? -x : 1;
    scale[i] = barriers ? max(least * c, min(c, (0.9 * distanceToBarrier(slot, x)) / RIDDERS_INITIAL_STEP)) : c;
  }
  return { x0, scale };
}

/** slotGeometry's scales for a range [lo, hi] without avoid points (as distanceToBarrier gives it). */
function rangeScales(x0: Float64Array, scale: Float64Array, lo: number, hi: number, least: number): void {
  for (let i = 0; i < x0.length; i++) {
    const x = x0[i];
    const c = x > 1 ? x : x < -1 ? -x : 1;
    const d = x >= lo && x <= hi ? min(x - lo, hi - x) : Infinity;
    scale[i] = max(least * c, min(c, (0.9 * d) / RIDDERS_INITIAL_STEP));
  }
}

/**
 * x[start + q] = x0[start + q] + t·dir[at + q], and back: plain functions of their arguments, not
 * loops inside a closure, so V8 optimises them once for every line (measured in plain Node: a
 * million-element move and restore took 12 ms inside the closure, 5 ms as functions).
 */
function moveRange(typed: Float64Array | Float32Array, x0: Float64Array, dir: Float64Array, at: number, start: number, count: number, t: number): void {
  for (let q = 0; q < count; q++) typed[start + q] = x0[start + q] + t * dir[at + q];
}

function noop(): void {}

function restoreRange(typed: Float64Array | Float32Array, x0: Float64Array, start: number, count: number): void {
  if (start === 0 && count === x0.length && count === typedLength(typed)) copyFloats(typed, x0);
  else for (let q = 0; q < count; q++) typed[start + q] = x0[start + q];
}

/**
 * Random ±1 signs times the geometry's scales for the elements start … start + count − 1: a
 * probe's displacement per unit t. 32 signs from each draw of the generator (its values carry
 * at least 32 random bits).
 */
export function signedScales(random: () => number, geo: SlotGeometry, start: number, count: number, reuse: Float64Array | null = null): Float64Array {
  // A buffer of a probe that no part kept can take the next probe's direction.
  const d = reuse !== null && reuse.length === count ? reuse : new F64(count);
  const sc = geo.scale;
  let bits = 0;
  for (let q = 0; q < count; q++) {
    if ((q & 31) === 0) bits = (random() * 4294967296) >>> 0;
    // Arithmetic, not a branch: random signs make a branch mispredict half the time.
    d[q] = sc[start + q] * ((((bits >>> (q & 31)) & 1) << 1) - 1);
  }
  return d;
}

/**
 * The line through the elements start … start + count − 1 of a slot along dir[at …] (signed
 * scales, signedScales): x_i(t) = x_i + t·dir[at + q], every other element fixed. Parts of a
 * probed set share their parent's dir at an offset, so splitting copies nothing. A contiguous
 * range moves with plain indexed loops, and a central pair moves from +t straight to −t, so a
 * probe of a million elements costs little beyond its forward calls.
 */
export function rangeLine(h: ForwardMap, slot: ParamSlot, geo: SlotGeometry, start: number, count: number, dir: Float64Array, at: number): RangeLine {
  // The geometry's scales keep every element inside up to the initial step (see SlotGeometry).
  const hc = relativeStep(slot.precision);
  const maxStep = RIDDERS_INITIAL_STEP;
  const typed = slot.typed;
  const x0 = geo.x0;
  const move = (t: number): void => {
    if (typed !== null) moveRange(typed, x0, dir, at, start, count, t);
    else for (let q = 0; q < count; q++) slot.set(start + q, x0[start + q] + t * dir[at + q]);
  };
  const restore = (): void => {
    if (typed !== null) restoreRange(typed, x0, start, count);
    else for (let q = 0; q < count; q++) slot.set(start + q, x0[start + q]);
  };
  return {
    slot,
    element: count === 1 ? start : -1,
    centralStep: hc,
    maxStep,
    refineStep: min(RIDDERS_INITIAL_STEP, maxStep),
    evalAt(t: number, out: Float64Array): number {
      h.forwardMoved(slot, start, count > 1, () => move(t), restore, out, false);
      return isFiniteVector(out) ? t : NaN;
    },
    pairAt(t: number, plus: Float64Array, minus: Float64Array): void {
      // No restore between the two calls: the second move overwrites every moved element.
      h.forwardMoved(slot, start, count > 1, () => move(t), noop, plus, false);
      h.forwardMoved(slot, start, count > 1, () => move(-t), noop, minus, false);
    },
    restore,
  };
}

/**
 * The central difference ⟨w, plus − minus⟩ / 2t of one projection after a range line's pairAt,
 * or NaN when an output is not finite (x − x is 0 for every finite x): one pass over the outputs
 * for both.
 */
export function centralProjection(w: Float64Array, plus: Float64Array, minus: Float64Array, t: number): number {
  const m = plus.length;
  let s = 0;
  let finite = 0;
  for (let j = 0; j < m; j++) {
    const a = plus[j];
    const b = minus[j];
    s += w[j] * (a - b);
    finite += a - a + (b - b);
  }
  return finite === 0 ? s / (2 * t) : NaN;
}
