// Second differences of a number-valued forward, the Hessian's reference when the op has no
// passing @backward: aᵀHb ≈ [f(x+ta+tb) − f(x+ta−tb) − f(x−ta+tb) + f(x−ta−tb)] / (4t²) with
// t = u^(1/4), the step that balances truncation (∝ t²) against roundoff (∝ u/t²) (Nocedal &
// Wright, Numerical Optimization, 2nd ed., §8.1), refined by Ridders' extrapolation
// (Numerical Recipes 3rd ed. §5.7; the error series is even in t as for a central difference).

import { F64, abs, max, min, pow, sqrt } from './builtins';
import { fail } from './failure';
import type { OpHarness } from './opHarness';
import type { ParamSlot } from './paramSlot';
import { ROUNDOFF_ULPS, unitRoundoff, type Precision } from './precision';
import { RIDDERS_ERROR_FACTOR } from './refine';
import { RIDDERS_INITIAL_STEP, riddersAdaptive } from './ridders';
import { distanceToBarrier } from './sampling';

/** One element moved by coef·t. */
export interface Move {
  slot: ParamSlot;
  index: number;
  coef: number;
}

/** Relative second-difference step u^(1/4) of a precision (Nocedal & Wright §8.1). */
export function secondStep(p: Precision): number {
  return pow(unitRoundoff(p), 0.25);
}

/** Largest t keeping every move inside its sampled range and away from avoid points. */
export function maxSecondStep(moves: Move[]): number {
  let m = Infinity;
  for (let q = 0; q < moves.length; q++) {
    const c = abs(moves[q].coef);
    if (c === 0) continue;
    const b = distanceToBarrier(moves[q].slot, moves[q].slot.get(moves[q].index));
    // Both directions may add on one element (a diagonal entry): keep 2t·c inside.
    if (b < Infinity) m = min(m, (0.9 * b) / (2 * c));
  }
  return m;
}

/** Evaluates f at x + t·(α·a + β·b) and restores x. */
function evalAt(h: OpHarness, a: Move[], b: Move[], alpha: number, beta: number, t: number, scratch: Float64Array): number {
  const saved: number[] = [];
  const all: Move[] = [];
  for (let q = 0; q < a.length; q++) all[all.length] = a[q];
  for (let q = 0; q < b.length; q++) all[all.length] = b[q];
  for (let q = 0; q < all.length; q++) saved[q] = all[q].slot.get(all[q].index);
  h.forwardMoved(
    all[0].slot,
    all[0].index,
    all.length > 1,
    () => {
      for (let q = 0; q < all.length; q++) {
        const mv = all[q];
        const sign = q < a.length ? alpha : beta;
        // Moves on one element add up: read the element's current value, not the saved one.
        mv.slot.set(mv.index, mv.slot.get(mv.index) + sign * t * mv.coef);
      }
    },
    () => {
      for (let q = all.length - 1; q >= 0; q--) all[q].slot.set(all[q].index, saved[q]);
    },
    scratch,
    false,
  );
  return scratch[0];
}

export interface SecondDifference {
  value: number;
  /** Roundoff bound of the value. */
  bound: number;
}

/** aᵀHb by one second difference at step t (see the module comment). */
export function secondDifference(h: OpHarness, a: Move[], b: Move[], t: number, uOut: number): SecondDifference | null {
  const scratch = new F64(1);
  const fpp = evalAt(h, a, b, 1, 1, t, scratch);
  const fpm = evalAt(h, a, b, 1, -1, t, scratch);
  const fmp = evalAt(h, a, b, -1, 1, t, scratch);
  const fmm = evalAt(h, a, b, -1, -1, t, scratch);
  const v = (fpp - fpm - fmp + fmm) / (4 * t * t);
  if (v - v !== 0) return null;
  return { value: v, bound: (ROUNDOFF_ULPS * uOut * (abs(fpp) + abs(fpm) + abs(fmp) + abs(fmm))) / (4 * t * t) };
}

/** Ratio between the steps of the kink ladder (as kinkTest.ts). */
const SECOND_KINK_RATIO = 1 / 8;
/** A gap counts only above this many times its roundoff (common practice for "clearly above noise"). */
const SECOND_KINK_NOISE = 4;

/**
 * Whether the second derivative along `dir` jumps near x (f'' discontinuous: a kink of the
 * gradient). One-sided second differences D+(s) = [f(x+2sd) − 2f(x+sd) + f(x)]/s² and D−(s)
 * (mirrored) differ by about 2s·f''' for a smooth function, shrinking with s; across a jump of
 * f'' the gap keeps its size (the one-sided argument of kinkTest.ts, one derivative higher).
 */
export function secondKink(h: OpHarness, dir: Move[], precision: Precision, tol: number): boolean {
  const none: Move[] = [];
  const t0 = secondStep(precision);
  const u = unitRoundoff(precision);
  let s = max(min(RIDDERS_INITIAL_STEP, maxSecondStep(dir)), 4 * t0);
  const scratch = new F64(1);
  let prevGap = NaN;
  let flagged = false;
  const f0 = evalAt(h, dir, none, 0, 0, 0, scratch);
  for (let q = 0; q < 4 && s >= t0; q++, s *= SECOND_KINK_RATIO) {
    const p1 = evalAt(h, dir, none, 1, 0, s, scratch);
    const p2 = evalAt(h, dir, none, 2, 0, s, scratch);
    const m1 = evalAt(h, dir, none, -1, 0, s, scratch);
    const m2 = evalAt(h, dir, none, -2, 0, s, scratch);
    const dPlus = (p2 - 2 * p1 + f0) / (s * s);
    const dMinus = (f0 - 2 * m1 + m2) / (s * s);
    const gap = dPlus - dMinus;
    if (gap - gap !== 0) return false;
    const noise = (ROUNDOFF_ULPS * u * (abs(p2) + 2 * abs(p1) + 2 * abs(f0) + 2 * abs(m1) + abs(m2))) / (s * s);
    const significant = abs(gap) > SECOND_KINK_NOISE * noise && abs(gap) > tol * max(abs(dPlus), abs(dMinus));
    flagged = prevGap === prevGap && significant && abs(gap) > sqrt(SECOND_KINK_RATIO) * abs(prevGap);
    prevGap = gap;
  }
  return flagged;
}

export interface RefinedSecond {
  value: number;
  /** Error allowance (RIDDERS_ERROR_FACTOR × Ridders' estimate, at least the roundoff at the first step). */
  bound: number;
  settled: boolean;
}

/** Ridders' extrapolation of aᵀHb from a "not small" step down (capped by barriers). */
export function refineSecond(h: OpHarness, a: Move[], b: Move[], precision: Precision, tol: number, analytic: number, f0: number): RefinedSecond {
  const all: Move[] = [];
  for (let q = 0; q < a.length; q++) all[all.length] = a[q];
  for (let q = 0; q < b.length; q++) all[all.length] = b[q];
  const t0 = secondStep(precision);
  const start = max(min(RIDDERS_INITIAL_STEP, maxSecondStep(all)), 4 * t0);
  const r = riddersAdaptive(
    (t) => {
      const d = secondDifference(h, a, b, t, unitRoundoff(precision));
      if (d === null) return null;
      const out = new F64(1);
      out[0] = d.value;
      return out;
    },
    start,
    4 * t0,
    1,
    (n, e) => e <= tol * max(abs(analytic), abs(n)),
  );
  const resolution = (ROUNDOFF_ULPS * unitRoundoff(precision) * 4 * abs(f0)) / (4 * r.initialStep[0] * r.initialStep[0]);
  const e = max(r.error[0], resolution);
  if (!(e < Infinity)) return { value: r.value[0], bound: Infinity, settled: false };
  return { value: r.value[0], bound: RIDDERS_ERROR_FACTOR * e, settled: e <= tol * max(abs(analytic), abs(r.value[0])) };
}

/** Fails unless the forward's output is one number (a Hessian needs a scalar function). */
export function requireNumberOutput(size: number, kind: string): void {
  if (size !== 1) fail(`@hessian needs a forward that returns a number; it returned ${size} values (${kind}) — use @jacobian for a vector output`);
}
