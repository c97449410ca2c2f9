// Second look at every suspicious element before a verdict: first a kink test (a kink is never a
// mismatch), then Ridders' extrapolation with its error estimate. An element is a mismatch only
// when the gap exceeds tolerance plus a multiple of Ridders' own error estimate.

import { F64, abs, formatNumber, max, min, sortIndicesBy } from './builtins';
import { ElementState, excessOf, relativeError, type Comparison, type ElementEstimates } from './judge';
import { estimateColumns } from './fullCheck';
import { findKink } from './kinkTest';
import { centralOnLine, elementLine } from './lines';
import { elementName, type ForwardMap } from './opHarness';
import type { ParamSlot } from './paramSlot';
import { ROUNDOFF_ULPS } from './precision';
import { RIDDERS_MIN_INITIAL_CENTRAL_STEPS, riddersAdaptive } from './ridders';

/**
 * Multiple of Ridders' error estimate allowed on top of the tolerance, dimensionless. The
 * estimate is the difference between neighbouring tableau entries (Numerical Recipes §5.7),
 * roughly the size of the error itself; 2 covers an estimate that is off by that much
 * (common practice, our choice).
 */
export const RIDDERS_ERROR_FACTOR = 2;

/** Most elements refined per parameter; a wrong backward is usually confirmed by the first. */
export const MAX_REFINED_ELEMENTS = 64;

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
  let refined = 0;
  for (let q = 0; q < order.length; q++) {
    if (summary.confirmed > 0 || refined >= MAX_REFINED_ELEMENTS || outOfTime()) {
      summary.unrefined = order.length - q;
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
    const discrepancy = new F64(K);
    for (let k = 0; k < K; k++) discrepancy[k] = abs(analytic[k][i] - est.numeric[k][p]);
    const scan = findKink(line, y0, ws, u, tol, cmp.floors, discrepancy);
    if (scan.kink !== null) {
      cmp.state[p] = ElementState.kink;
      if (summary.kink === null) summary.kink = { slot, index: i, value: slot.get(i), jump: scan.kink.jump };
      continue;
    }
    // Start Ridders below any kink signature the ladder saw, so its steps do not cross one.
    const r = riddersAdaptive(
      (step) => centralOnLine(line, ws, step, plus, minus),
      min(line.refineStep, scan.smoothBelow),
      RIDDERS_MIN_INITIAL_CENTRAL_STEPS * line.centralStep,
      K,
      (n, e, k) => e <= tol * max(abs(analytic[k][i]), abs(n), cmp.floors[k]),
    );
    let state: ElementState = ElementState.ok;
    let bestExcess = -Infinity;
    let bestK = 0;
    const effective = new F64(K);
    for (let k = 0; k < K; k++) {
      const a = analytic[k][i];
      const n = r.value[k];
      // Ridders' estimate sees only the differences that moved; an output whose change stays
      // below its own rounding even at the first step hides it. Resolution: the roundoff of a
      // central difference over every output at the initial step.
      const resolution = (ROUNDOFF_ULPS * u * magnitude[k]) / r.initialStep[k];
      const e = max(r.error[k], resolution);
      effective[k] = e;
      const scale = max(abs(a), abs(n), cmp.floors[k]);
      const gapExcess = excessOf(a, n, RIDDERS_ERROR_FACTOR * e, tol, cmp.floors[k]);
      if (gapExcess > 0 && e < Infinity) state = ElementState.mismatch;
      else if (state === ElementState.ok && !(e <= tol * scale)) state = ElementState.uncertain;
      if (gapExcess > bestExcess) {
        bestExcess = gapExcess;
        bestK = k;
      }
      est.numeric[k][p] = n;
      est.bound[k][p] = e < Infinity ? RIDDERS_ERROR_FACTOR * e : est.bound[k][p];
    }
    cmp.state[p] = state;
    cmp.excess[p] = bestExcess;
    cmp.worstProbe[p] = bestK;
    cmp.rel[p] = relativeError(analytic[bestK][i], est.numeric[bestK][p], est.bound[bestK][p], tol, cmp.floors[bestK]);
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
