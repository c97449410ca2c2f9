// A short way to confirm a suspicious element whose disagreement is far beyond everything that
// could explain it, before the full refinement (kink ladder and Ridders' extrapolation): six
// forward calls along the element's own line, at ±s₀, ±h and ±2h, and the baseline output.
//
// What could make a central difference D(h) disagree with a correct backward, and what bounds it:
// - truncation: for a smooth function D(h) − f' ≈ (D(2h) − D(h))/3 (Richardson: the error of a
//   central difference is c·h² + O(h⁴), Press et al., Numerical Recipes 3rd ed., §5.7);
// - a kink within the step: with slopes s₁, s₂ on either side of a kink inside [x − h, x + h],
//   the one-sided differences F = (f(x+h) − f(x))/h and B = (f(x) − f(x−h))/h differ by at least
//   the distance of D(h) from the nearer slope (for straight pieces |F − B| = 2|s₁ − D(h)| when
//   the backward gives s₁), and a kink in (h, 2h] moves D(2h) away from D(h);
// - the outputs' rounding: ROUNDOFF_ULPS ulps of every output that moved, through the projection
//   (IEEE 754 unit roundoff), for D(h) and for F and B; and what the outputs that did not move
//   can hide: one that stays put even at the refinement's first step s₀ (two more calls, at
//   ±s₀) changes by less than its rounding there, so at most u·|y_j|/s₀ of the derivative (as in
//   refine.ts); one that moved at s₀ but not at h counts as moved;
// - the tolerance itself.
// The element is confirmed only when its gap exceeds WIDE_MARGIN times the sum of all of them;
// otherwise (or when a step leaves the sampled range, or an output is not finite) the full
// refinement decides as before. Smooth curvature also enters F − B (h·f''), which only makes the
// rule stricter.

import { F64, U8, abs, max } from './builtins';
import type { Line } from './lines';
import { ROUNDOFF_ULPS } from './precision';

/**
 * The gap must exceed this many times everything that could explain it (our choice, as refine.ts
 * WIDE_MARGIN: a step or a kink fools a difference by a fraction of the tolerance's order, not by
 * ten times the sum of its own signatures).
 */
export const WIDE_CONFIRM_MARGIN = 10;

export interface WideConfirmation {
  /** The upstream vector whose gap confirmed it, the estimate D(h) and its allowance. */
  k: number;
  numeric: number;
  allowance: number;
}

/**
 * Confirms a mismatch of element i (analytic values a[k] = analytic[k][i]) from its own line, or
 * returns null when the gap is not wide enough or the comparison is not sound. plus/minus are
 * scratch buffers of the output size; y0 the output at the sample point.
 */
export function confirmWide(
  line: Line,
  ws: Float64Array[],
  y0: Float64Array,
  a: Float64Array,
  u: number,
  tol: number,
  floors: Float64Array,
  plus: Float64Array,
  minus: Float64Array,
): WideConfirmation | null {
  const h = line.centralStep;
  if (2 * h > line.maxStep) return null;
  const K = ws.length;
  const m = y0.length;
  // Which outputs move at ±s₀: the others are constant up to their rounding.
  const s0 = line.refineStep;
  if (!(s0 > 2 * h)) return null;
  const big = line.evalAt(s0, plus);
  if (big !== big) return null;
  const bigMinus = line.evalAt(-s0, minus);
  if (bigMinus !== bigMinus) return null;
  const movedFar = new U8(m);
  for (let j = 0; j < m; j++) movedFar[j] = plus[j] !== y0[j] || minus[j] !== y0[j] ? 1 : 0;
  const hidden = new F64(K);
  const d1 = new F64(K);
  const fwd = new F64(K);
  const bwd = new F64(K);
  const r1 = new F64(K);
  const rOne = new F64(K);
  const sp = line.evalAt(h, plus);
  if (sp !== sp) return null;
  const sm = line.evalAt(-h, minus);
  if (sm !== sm || !(sp > 0) || !(sm < 0)) return null;
  for (let k = 0; k < K; k++) {
    const w = ws[k];
    let c = 0;
    let f = 0;
    let b = 0;
    let mag = 0;
    let still = 0;
    for (let j = 0; j < m; j++) {
      const p = plus[j];
      const q = minus[j];
      const o = y0[j];
      if (movedFar[j] === 0 && p === o && q === o) {
        still += abs(w[j]) * abs(o);
        continue;
      }
      c += w[j] * (p - q);
      f += w[j] * (p - o);
      b += w[j] * (o - q);
      mag += abs(w[j]) * (abs(p) + abs(q) + abs(o));
    }
    hidden[k] = (u * still) / s0;
    d1[k] = c / (sp - sm);
    fwd[k] = f / sp;
    bwd[k] = b / -sm;
    r1[k] = (ROUNDOFF_ULPS * u * mag) / (sp - sm);
    rOne[k] = (ROUNDOFF_ULPS * u * mag) / max(sp, -sm);
  }
  const sp2 = line.evalAt(2 * h, plus);
  if (sp2 !== sp2) return null;
  const sm2 = line.evalAt(-2 * h, minus);
  if (sm2 !== sm2 || !(sp2 > sm2)) return null;
  let best: WideConfirmation | null = null;
  let bestRatio = 0;
  for (let k = 0; k < K; k++) {
    const w = ws[k];
    let c = 0;
    for (let j = 0; j < m; j++) c += w[j] * (plus[j] - minus[j]);
    const d2 = c / (sp2 - sm2);
    const allowance = tol * max(abs(a[k]), abs(d1[k]), floors[k]) + 2 * r1[k] + abs(d2 - d1[k]) + abs(fwd[k] - bwd[k]) + 2 * rOne[k] + hidden[k];
    const gap = abs(a[k] - d1[k]);
    if (!(allowance < Infinity) || !(gap < Infinity)) return null;
    if (gap > WIDE_CONFIRM_MARGIN * allowance && gap > bestRatio * allowance) {
      bestRatio = gap / allowance;
      best = { k, numeric: d1[k], allowance };
    }
  }
  return best;
}
