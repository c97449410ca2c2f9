// Decides whether a line passes through a non-differentiable point (a kink or a jump) near the
// sample point, from one-sided difference quotients taken on a ladder of shrinking steps.
//
// For a smooth function the gap between the forward and the backward quotient,
// D+(s) − D−(s) = (g(s) − 2g(0) + g(−s))/s ≈ s·g''(0), shrinks in proportion to s. Across a
// kink it stays at the jump of the slope (and grows like 1/s across a jump of the value). So a
// gap that shrinks clearly slower than the step — beyond roundoff, and beyond the tolerance
// — marks a non-differentiable point within the step (the one-sided quotient argument of
// Nocedal & Wright, 2nd ed., §8.1, applied at two scales; the ladder design is ours).

import { abs, max, sqrt } from './builtins';
import { projectDifference, projectMagnitude, type Line } from './lines';
import { ROUNDOFF_ULPS } from './precision';

/** Ratio between consecutive steps of the ladder (dimensionless): wide enough to separate s from 1. */
export const KINK_LADDER_RATIO = 1 / 8;
/**
 * A gap counts only when it exceeds this many times its own roundoff estimate
 * (dimensionless; common practice for "clearly above noise").
 */
const KINK_NOISE_FACTOR = 4;

export interface KinkFinding {
  /** Step at which the gap kept its size. */
  step: number;
  /** Gap of slopes (D+ − D−) there, for the first upstream probe that showed it. */
  jump: number;
}

/** Steps from the refinement step down to the central step, each 1/8 of the previous. */
export function kinkLadder(line: Line): number[] {
  const steps: number[] = [];
  let s = line.refineStep;
  while (s >= line.centralStep || steps.length < 2) {
    steps[steps.length] = s;
    s *= KINK_LADDER_RATIO;
  }
  return steps;
}

/**
 * Looks for a kink along a line. y0 is the output at the sample point; ws the upstream
 * vectors; u the output's unit roundoff; tol the relative tolerance; floors per upstream
 * vector the absolute level below which gradient values count as zero.
 */
export function findKink(line: Line, y0: Float64Array, ws: Float64Array[], u: number, tol: number, floors: Float64Array): KinkFinding | null {
  const K = ws.length;
  const steps = kinkLadder(line);
  const plus = new Float64Array(y0.length);
  const minus = new Float64Array(y0.length);
  const pd = new Float64Array(K);
  const md = new Float64Array(K);
  const pm = new Float64Array(K);
  const mm = new Float64Array(K);
  let prevGap: Float64Array | null = null;
  let prevStep = 0;
  for (let q = 0; q < steps.length; q++) {
    const s = steps[q];
    const sp = line.evalAt(s, plus);
    const sm = line.evalAt(-s, minus);
    if (sp !== sp || sm !== sm || sp === 0 || sm === 0) {
      prevGap = null; // not finite here (domain edge): start over at the smaller steps
      continue;
    }
    projectDifference(ws, plus, y0, pd);
    projectDifference(ws, y0, minus, md);
    projectMagnitude(ws, plus, y0, pm);
    projectMagnitude(ws, y0, minus, mm);
    const gap = new Float64Array(K);
    for (let k = 0; k < K; k++) {
      const dPlus = pd[k] / sp;
      const dMinus = md[k] / -sm;
      gap[k] = dPlus - dMinus;
      if (prevGap === null) continue;
      const noise = (ROUNDOFF_ULPS * u * (pm[k] + mm[k])) / s;
      const ratio = s / prevStep;
      const significant = abs(gap[k]) > KINK_NOISE_FACTOR * noise && abs(gap[k]) > tol * max(abs(dPlus), abs(dMinus), floors[k]);
      // Smooth: the gap shrinks by `ratio`; a kink keeps it (ratio 1). Split the difference geometrically.
      if (significant && abs(gap[k]) > sqrt(ratio) * abs(prevGap[k])) return { step: s, jump: gap[k] };
    }
    prevGap = gap;
    prevStep = s;
  }
  return null;
}
