// Second look at every suspicious element before a verdict: first a kink test (a kink is never a
// mismatch), then Ridders' extrapolation with its error estimate. An element is a mismatch only
// when the gap exceeds tolerance plus a multiple of Ridders' own error estimate.

import { F64, abs, formatNumber, max, min, sortIndicesBy } from './builtins';
import { ElementState, excessOf, relativeError, type Comparison, type ElementEstimates } from './judge';
import { estimateColumns } from './fullCheck';
import { findKink } from './kinkTest';
import { centralOnLine, elementLine, projectMagnitude } from './lines';
import type { ForwardMap } from './forwardMap';
import { elementName, type ParamSlot } from './paramSlot';
import { ROUNDOFF_ULPS, unitRoundoff } from './precision';
import { confirmWide } from './wideConfirm';
import { RIDDERS_MIN_INITIAL_CENTRAL_STEPS, RIDDERS_RETRY_RATIO, riddersAdaptive, type AdaptiveRiddersResult } from './ridders';

/**
 * Multiple of Ridders' error estimate allowed on top of the tolerance, dimensionless. The
 * estimate is the difference between neighbouring tableau entries (Numerical Recipes §5.7),
 * roughly the size of the error itself; 2 covers an estimate that is off by that much
 * (common practice, our choice).
 */
export const RIDDERS_ERROR_FACTOR = 2;

/**
 * A mismatch whose gap exceeds its allowance (tolerance plus RIDDERS_ERROR_FACTOR × the error)
 * by more than this factor skips the confirming run from a smaller step (dimensionless, our
 * choice): a step too large for the function's scale fools Ridders' estimate by a fraction of
 * the tolerance's order, not by a hundred times it.
 */
export const WIDE_MARGIN = 10;

/** Most elements refined per parameter; a wrong backward is usually confirmed by the first. */
export const MAX_REFINED_ELEMENTS = 64;

/** What one Ridders run says about an element: its state and the worst upstream probe. */
interface RunJudgement {
  state: ElementState;
  bestExcess: number;
  bestK: number;
  /** Per probe, the error used: Ridders' estimate or the resolution, whichever is larger. */
  effective: Float64Array;
}

export interface KinkReport {
  slot: ParamSlot;
  index: number;
  value: number;
  jump: number;
}

export interface RefineSummary {
  confirmed: number;
  uncertain: number;
  /** Suspicious elements left without refinement (cap or time). */
  unrefined: number;
  kink: KinkReport | null;
  /** Message for the first uncertain element. */
  uncertainNote: string;
  /** Set when the time limit (not a verdict or the cap) left elements unrefined: refined so far, of all suspicious. */
  stoppedAt?: { done: number; total: number };
}

/**
 * Ulps of a parameter's value below which no step is taken (dimensionless): a step of a few ulps
 * is mostly the rounding of the stored value (our choice: 64).
 */
const MIN_STEP_ULPS = 64;

/**
 * The smallest step worth taking along element i: the larger of MIN_STEP_ULPS ulps of the value
 * and the step at which the outputs' roundoff (ROUNDOFF_ULPS·u·Σ|w_j||y_j| / step) reaches the
 * tolerance of the element's scale; never above the central step. Below it, refinement learns
 * nothing; above it, a function that changes over a smaller scale than max(1, |x|) can still
 * be followed.
 */
function smallestStep(slot: ParamSlot, i: number, analytic: Float64Array[], floors: Float64Array, magnitude: Float64Array, u: number, tol: number, central: number): number {
  const x = slot.get(i);
  let step = MIN_STEP_ULPS * unitRoundoff(slot.precision) * max(1, abs(x));
  let roundoffStep = Infinity;
  for (let k = 0; k < analytic.length; k++) {
    const scale = max(abs(analytic[k][i]), floors[k]);
    if (scale > 0 && tol > 0) roundoffStep = min(roundoffStep, (ROUNDOFF_ULPS * u * magnitude[k]) / (tol * scale));
  }
  if (roundoffStep < Infinity) step = max(step, roundoffStep);
  return min(step, central);
}

/**
 * Refines the suspicious positions of a comparison in order of relative error, worst first,
 * stopping at the first confirmed mismatch. Updates est, cmp in place.
 */
export function refineSuspicious(
  h: ForwardMap,
  slot: ParamSlot,
  analytic: Float64Array[],
  est: ElementEstimates,
  cmp: Comparison,
  ws: Float64Array[],
  y0: Float64Array,
  u: number,
  tol: number,
  outOfTime: () => boolean,
  recheckAlone: boolean,
): RefineSummary {
  const summary: RefineSummary = { confirmed: 0, uncertain: 0, unrefined: 0, kink: null, uncertainNote: '' };
  const suspicious: number[] = [];
  for (let p = 0; p < cmp.state.length; p++) if (cmp.state[p] === ElementState.suspicious) suspicious[suspicious.length] = p;
  if (suspicious.length === 0) return summary;
  const order = sortIndicesBy(suspicious, (p) => cmp.rel[p], true);
  const K = ws.length;
  const m = y0.length;
  const plus = new F64(m);
  const minus = new F64(m);
  // Σ_j |w_j|·|y0_j| per probe: the output magnitude behind the resolution of a difference.
  const magnitude = new F64(K);
  for (let k = 0; k < K; k++) {
    let s = 0;
    for (let j = 0; j < m; j++) s += abs(ws[k][j]) * abs(y0[j]);
    magnitude[k] = s;
  }
  const movedScratch = new F64(K);
  // The parameter's scale per probe: its largest gradient value.
  const paramScale = new F64(K);
  for (let k = 0; k < K; k++) {
    let g = 0;
    const a = analytic[k];
    for (let i = 0; i < a.length; i++) g = max(g, abs(a[i]));
    paramScale[k] = g;
  }
  let refined = 0;
  const atElement = new F64(K);
  for (let q = 0; q < order.length; q++) {
    if (summary.confirmed > 0 || refined >= MAX_REFINED_ELEMENTS || outOfTime()) {
      summary.unrefined = order.length - q;
      if (summary.confirmed === 0 && refined < MAX_REFINED_ELEMENTS) summary.stoppedAt = { done: q, total: order.length };
      break;
    }
    const p = order[q];
    const i = est.indices[p];
    if (recheckAlone) {
      // A grouped estimate first gets its own column: a wrong structure guess must cost time, not a false alarm.
      const alone = estimateColumns(h, slot, [i], ws, u, outOfTime);
      let worst = -Infinity;
      let worstK = 0;
      for (let k = 0; k < K; k++) {
        est.numeric[k][p] = alone.numeric[k][0];
        est.bound[k][p] = alone.bound[k][0];
        const e = excessOf(analytic[k][i], alone.numeric[k][0], alone.bound[k][0], tol, cmp.floors[k]);
        if (e > worst) {
          worst = e;
          worstK = k;
        }
      }
      cmp.excess[p] = worst;
      cmp.worstProbe[p] = worstK;
      cmp.rel[p] = relativeError(analytic[worstK][i], est.numeric[worstK][p], est.bound[worstK][p], tol, cmp.floors[worstK]);
      if (worst <= 0) {
        cmp.state[p] = ElementState.ok;
        continue;
      }
    }
    refined++;
    const line = elementLine(h, slot, i);
    // A gap far beyond every signature of truncation, a kink or rounding is a mismatch without
    // the ladder and the tableau (wideConfirm.ts); anything less goes the full way below.
    for (let k = 0; k < K; k++) atElement[k] = analytic[k][i];
    const quick = confirmWide(line, ws, y0, atElement, u, tol, cmp.floors, plus, minus);
    if (quick !== null) {
      const k = quick.k;
      est.numeric[k][p] = quick.numeric;
      est.bound[k][p] = quick.allowance;
      cmp.state[p] = ElementState.mismatch;
      cmp.worstProbe[p] = k;
      cmp.excess[p] = abs(analytic[k][i] - quick.numeric) - quick.allowance;
      cmp.rel[p] = abs(analytic[k][i] - quick.numeric) / max(abs(analytic[k][i]), abs(quick.numeric), cmp.floors[k], 1e-300);
      summary.confirmed++;
      continue;
    }
    const discrepancy = new F64(K);
    for (let k = 0; k < K; k++) discrepancy[k] = abs(analytic[k][i] - est.numeric[k][p]);
    const scan = findKink(line, y0, ws, u, tol, cmp.floors, discrepancy, (moved) => smallestStep(slot, i, analytic, cmp.floors, moved, u, tol, line.centralStep));
    const small = smallestStep(slot, i, analytic, cmp.floors, scan.moved, u, tol, line.centralStep);
    if (scan.kink !== null) {
      cmp.state[p] = ElementState.kink;
      if (summary.kink === null) summary.kink = { slot, index: i, value: slot.get(i), jump: scan.kink.jump };
      continue;
    }
    // Start Ridders below any kink signature the ladder saw, so its steps do not cross one; when
    // it does not settle, go on to smaller initial steps, down to what the roundoff allows (the
    // function may change over a scale much smaller than max(1, |x|)).
    // Outputs that moved at Ridders' steps too (its first step may reach farther than the ladder).
    const movedAt = new F64(K);
    const central = (step: number): Float64Array | null => {
      const c = centralOnLine(line, ws, step, plus, minus);
      if (c !== null) {
        projectMagnitude(ws, plus, minus, movedScratch);
        for (let k = 0; k < K; k++) movedAt[k] = max(movedAt[k], movedScratch[k] / 2);
      }
      return c;
    };
    const minStep = min(RIDDERS_MIN_INITIAL_CENTRAL_STEPS * line.centralStep, RIDDERS_MIN_INITIAL_CENTRAL_STEPS * small);
    const settled = (n: number, e: number, k: number): boolean => e <= tol * max(abs(analytic[k][i]), abs(n), cmp.floors[k]);
    let r = riddersAdaptive(central, min(line.refineStep, scan.smoothBelow), minStep, K, settled);
    const judgeRun = (run: AdaptiveRiddersResult): RunJudgement => {
      const j: RunJudgement = { state: ElementState.ok, bestExcess: -Infinity, bestK: 0, effective: new F64(K) };
      for (let k = 0; k < K; k++) {
        const a = analytic[k][i];
        const n = run.value[k];
        // Ridders' estimate sees only the differences that moved; an output whose change stays
        // below its own rounding hides it. Resolution: the roundoff of a central difference over
        // the outputs that moved, at the initial step, plus what the unmoved ones can hide.
        // Outputs that never moved, even at the ladder's first step s₀, change by less than their
        // rounding there: each can hide at most u·|y_j|/s₀ of the derivative.
        const movedMag = min(magnitude[k], max(scan.moved[k], movedAt[k]));
        const resolution = (ROUNDOFF_ULPS * u * movedMag) / run.initialStep[k] + (u * (magnitude[k] - movedMag)) / line.refineStep;
        const e = max(run.error[k], resolution);
        j.effective[k] = e;
        // An element far below the parameter's own scale (under its zero level) is judged against
        // that scale: finite differences cannot resolve it to its own relative tolerance, and
        // it cannot hide an error above tolerance × the parameter's largest gradient.
        const belowFloor = max(abs(a), abs(n)) < cmp.floors[k];
        const scale = belowFloor ? max(paramScale[k], cmp.floors[k]) : max(abs(a), abs(n), cmp.floors[k]);
        const gapExcess = excessOf(a, n, RIDDERS_ERROR_FACTOR * e, tol, cmp.floors[k]);
        if (gapExcess > 0 && e < Infinity) j.state = ElementState.mismatch;
        else if (j.state === ElementState.ok && !(e <= tol * scale)) j.state = ElementState.uncertain;
        if (gapExcess > j.bestExcess) {
          j.bestExcess = gapExcess;
          j.bestK = k;
        }
      }
      return j;
    };
    let judged = judgeRun(r);
    // A mismatch must hold from a smaller initial step too: Ridders' error estimate is only as
    // good as the initial step is for the function's own scale (Numerical Recipes §5.7: the
    // function should change "substantially but not wildly" over it), and a function that
    // changes over a scale much smaller than max(1, |x|) fools it at the larger one.
    const second = min(r.initialStep[judged.bestK], line.refineStep) * RIDDERS_RETRY_RATIO;
    const wide = judged.state === ElementState.mismatch && judged.bestExcess > WIDE_MARGIN * (abs(analytic[judged.bestK][i] - r.value[judged.bestK]) - judged.bestExcess);
    if (judged.state === ElementState.mismatch && !wide && second >= minStep) {
      const r2 = riddersAdaptive(central, second, minStep, K, settled);
      const judged2 = judgeRun(r2);
      if (judged2.state !== ElementState.mismatch) {
        r = r2;
        judged = judged2;
      }
    }
    const state = judged.state;
    const bestExcess = judged.bestExcess;
    const bestK = judged.bestK;
    const effective = judged.effective;
    for (let k = 0; k < K; k++) {
      const e = effective[k];
      est.numeric[k][p] = r.value[k];
      est.bound[k][p] = e < Infinity ? RIDDERS_ERROR_FACTOR * e : est.bound[k][p];
    }
    cmp.state[p] = state;
    cmp.excess[p] = bestExcess;
    cmp.worstProbe[p] = bestK;
    // A confirmed mismatch reports the relative error of its own two numbers; otherwise the
    // error is tempered by the estimate's bound (relativeError).
    cmp.rel[p] =
      state === ElementState.mismatch
        ? abs(analytic[bestK][i] - est.numeric[bestK][p]) / max(abs(analytic[bestK][i]), abs(est.numeric[bestK][p]), cmp.floors[bestK], 1e-300)
        : relativeError(analytic[bestK][i], est.numeric[bestK][p], est.bound[bestK][p], tol, cmp.floors[bestK]);
    if (state === ElementState.mismatch) summary.confirmed++;
    if (state === ElementState.uncertain) {
      summary.uncertain++;
      if (summary.uncertainNote === '') {
        const k = bestK;
        const why = effective[k] > r.error[k] ? 'the outputs are too large to show a change of this size' : "Ridders' extrapolation does not settle";
        summary.uncertainNote = `the finite-difference estimate at ${elementName(slot, i)} = ${formatNumber(slot.get(i))} is unreliable: ${why} (error ${formatNumber(effective[k], 3)} against a value of ${formatNumber(r.value[k], 6)}; backward gives ${formatNumber(analytic[k][i], 6)})`;
      }
    }
  }
  return summary;
}
