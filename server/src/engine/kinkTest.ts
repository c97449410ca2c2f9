// Decides whether a line passes through a non-differentiable point (a kink or a jump) near the
// sample point, from one-sided difference quotients taken on a ladder of shrinking steps.
//
// For a smooth function the gap between the forward and the backward quotient,
// D+(s) − D−(s) = (g(s) − 2g(0) + g(−s))/s ≈ s·g''(0), shrinks in proportion to s. Across a
// kink it stays at the jump of the slope (and grows like 1/s across a jump of the value). So a
// gap that shrinks clearly slower than the step — beyond roundoff, and beyond the tolerance
// — marks a non-differentiable point within the step (the one-sided quotient argument of
// Nocedal & Wright, 2nd ed., §8.1, applied at two scales; the ladder design is ours).

import { F64, abs, max, min, sqrt } from './builtins';
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

export interface KinkScan {
  /**
   * A non-differentiable point within the smallest ladder step (so within reach of the central
   * difference) whose slope gap is large enough to explain the discrepancy; null otherwise.
   */
  kink: KinkFinding | null;
  /**
   * Largest step below every kink signature the ladder saw: refinement starting there does not
   * cross a kink farther away (or a region the one-sided quotients could not tell from one).
   */
  smoothBelow: number;
  /**
   * Per upstream vector, Σ_j |w_j|·|y_j| over the outputs that moved at any ladder step: the
   * magnitude behind the roundoff of a difference along this line (outputs that never move
   * carry none into it).
   */
  moved: Float64Array;
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
 * vector the absolute level below which gradient values count as zero; discrepancy per
 * upstream vector the gap |analytic − numeric| that a kink would have to explain: a slope gap
 * J moves a central difference by at most |J| from either one-sided slope, so a kink smaller
 * than half the discrepancy cannot be its cause.
 */
export function findKink(
  line: Line,
  y0: Float64Array,
  ws: Float64Array[],
  u: number,
  tol: number,
  floors: Float64Array,
  discrepancy: Float64Array,
  floorStepOf: (moved: Float64Array) => number = () => line.centralStep,
): KinkScan {
  const K = ws.length;
  const steps = kinkLadder(line);
  const plus = new F64(y0.length);
  const minus = new F64(y0.length);
  const pd = new F64(K);
  const md = new F64(K);
  const pm = new F64(K);
  const mm = new F64(K);
  let prevGap: Float64Array | null = null;
  let prevStep = 0;
  let lastFlagged = -1;
  let finding: KinkFinding | null = null;
  const moved = new F64(K);
  const ladderLength = steps.length;
  // The finding of the last step before the ladder was extended, kept when a smaller step
  // turns out too noisy to say anything.
  let pending: KinkFinding | null = null;
  for (let q = 0; q < steps.length; q++) {
    const s = steps[q];
    const sp = line.evalAt(s, plus);
    const sm = line.evalAt(-s, minus);
    if (sp !== sp || sm !== sm || sp === 0 || sm === 0) {
      prevGap = null; // not finite here (domain edge): start over at the smaller steps
      lastFlagged = q;
      continue;
    }
    projectDifference(ws, plus, y0, pd);
    projectDifference(ws, y0, minus, md);
    projectMagnitude(ws, plus, y0, pm);
    projectMagnitude(ws, y0, minus, mm);
    for (let k = 0; k < K; k++) moved[k] = max(moved[k], pm[k] / 2, mm[k] / 2);
    const gap = new F64(K);
    let flagged: KinkFinding | null = null;
    let informative = false;
    for (let k = 0; k < K; k++) {
      const dPlus = pd[k] / sp;
      const dMinus = md[k] / -sm;
      gap[k] = dPlus - dMinus;
      if (prevGap === null) continue;
      const noise = (ROUNDOFF_ULPS * u * (pm[k] + mm[k])) / s;
      if (KINK_NOISE_FACTOR * noise < tol * max(abs(dPlus), abs(dMinus), floors[k])) informative = true;
      const ratio = s / prevStep;
      const significant = abs(gap[k]) > KINK_NOISE_FACTOR * noise && abs(gap[k]) > tol * max(abs(dPlus), abs(dMinus), floors[k]);
      // Smooth: the gap shrinks by \`ratio\`; a kink keeps it (ratio 1). Split the difference geometrically.
      if (significant && abs(gap[k]) > sqrt(ratio) * abs(prevGap[k])) {
        if (flagged === null) flagged = { step: s, jump: gap[k] };
        if (q === steps.length - 1 && abs(gap[k]) >= 0.5 * discrepancy[k] && finding === null) finding = { step: s, jump: gap[k] };
      }
    }
    if (q >= ladderLength && !informative) {
      // Below the roundoff's reach: this step says nothing; the larger step's finding stands.
      finding = pending;
      break;
    }
    if (flagged !== null) lastFlagged = q;
    prevGap = gap;
    prevStep = s;
    // A function that changes over a scale much smaller than max(1, |x|) looks like a kink at the
    // central step: go on down the ladder, to the smallest step the roundoff allows, as long as
    // the smallest step still shows a signature. A kink keeps it at every step; a smooth
    // function's gap starts shrinking with the step once the step is below its scale.
    if (q === steps.length - 1 && flagged !== null && s * KINK_LADDER_RATIO >= floorStepOf(moved)) {
      steps[steps.length] = s * KINK_LADDER_RATIO;
      pending = finding;
      finding = null;
    }
  }
  // Below the last flagged pair's smaller step the kink (if any) lies between that step and the next.
  const smoothBelow = lastFlagged < 0 ? steps[0] : steps[min(lastFlagged + 1, steps.length - 1)];
  return { kink: finding, smoothBelow, moved };
}
