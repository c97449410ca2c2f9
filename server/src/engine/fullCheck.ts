// Central differences of chosen elements, one pair of forward calls per element (a column of
// the Jacobian): projected onto upstream vectors for the full check of a @backward (2 forwards
// per element serve all K probes), or read entry by entry for a @jacobian or @hessian matrix.

import { F64, I32 } from './builtins';
import { stopAtTimeLimit } from './failure';
import type { ForwardMap } from './forwardMap';
import type { ElementEstimates } from './judge';
import type { ParamSlot } from './paramSlot';
import { ROUNDOFF_ULPS, centralStep } from './precision';

/**
 * Central differences (Nocedal & Wright, 2nd ed., §8.1) of the listed elements, perturbed in
 * place and restored, projected onto the upstream vectors ws: numeric[k][p] is the entry of
 * element indices[p] under ws[k]. The step is rounded to the parameter's storage first and the
 * quotient divides by the step actually taken (xp − xm), so a float32 parameter's rounding does
 * not bias the estimate. The bound is ROUNDOFF_ULPS·u·Σ_j |w_j|(|f⁺_j| + |f⁻_j|) / (xp − xm) over the
 * outputs that moved: the roundoff of both evaluations carried through the projection. Outputs
 * that did not move carry no roundoff into the difference (the forward is deterministic), and
 * counting them would let a million untouched outputs hide a real error in the one that moved.
 */
export function estimateColumns(
  h: ForwardMap,
  slot: ParamSlot,
  indices: ArrayLike<number>,
  ws: Float64Array[],
  uOut: number,
  outOfTime: () => boolean,
  clockEvery = CLOCK_EVERY_CHEAP,
): ElementEstimates {
  return centralColumns(h, slot, indices, ws, ws.length, uOut, outOfTime, 'elements', clockEvery);
}

/**
 * Elements between two reads of the clock when a forward call is cheap: reading it costs far
 * less than a forward call, but not nothing.
 */
const CLOCK_EVERY_CHEAP = 64;

/**
 * Elements between two reads of the clock for a forward call of `forwardMs`: every element once
 * a call costs more than 0.01 ms (our choice: a clock read is well under a microsecond), so 64
 * slow calls cannot carry the check past the sandbox's watchdog.
 */
export function clockEvery(forwardMs: number): number {
  return forwardMs >= 0.01 ? 1 : CLOCK_EVERY_CHEAP;
}

/**
 * Central differences of every element of a slot, read entry by entry: numeric[k][p] is row k
 * (output k) of column p. The same differences and bound as estimateColumns with the unit
 * vectors as upstream vectors, without the projections, so a column costs O(m), not O(m²).
 */
export function estimateUnitColumns(h: ForwardMap, slot: ParamSlot, m: number, uOut: number, outOfTime: () => boolean, clockEvery = CLOCK_EVERY_CHEAP): ElementEstimates {
  const indices = new I32(slot.size);
  for (let i = 0; i < slot.size; i++) indices[i] = i;
  return centralColumns(h, slot, indices, null, m, uOut, outOfTime, 'columns', clockEvery);
}

/** The one loop of both: ws null reads the outputs themselves (K = m unit vectors). */
function centralColumns(
  h: ForwardMap,
  slot: ParamSlot,
  indices: ArrayLike<number>,
  ws: Float64Array[] | null,
  K: number,
  uOut: number,
  outOfTime: () => boolean,
  unit: 'elements' | 'columns',
  every: number,
): ElementEstimates {
  const count = indices.length;
  const numeric: Float64Array[] = [];
  const bound: Float64Array[] = [];
  for (let k = 0; k < K; k++) {
    numeric[k] = new F64(count);
    bound[k] = new F64(count);
  }
  // Between the clock reads (every `every` elements), the engine's hard stop (OpHarness.stopAfter)
  // reports this progress when a slow forward reaches it first.
  const progress = { param: slot.name, stage: 'elements' as const, done: 0, total: count, unit };
  const outer = h.perturbation.progress;
  h.perturbation.progress = progress;
  try {
    centralColumnsLoop(h, slot, indices, ws, K, uOut, outOfTime, unit, every, numeric, bound, progress);
  } finally {
    h.perturbation.progress = outer;
  }
  return { indices, numeric, bound };
}

function centralColumnsLoop(
  h: ForwardMap,
  slot: ParamSlot,
  indices: ArrayLike<number>,
  ws: Float64Array[] | null,
  K: number,
  uOut: number,
  outOfTime: () => boolean,
  unit: 'elements' | 'columns',
  every: number,
  numeric: Float64Array[],
  bound: Float64Array[],
  progress: { done: number },
): void {
  const count = indices.length;
  const m = h.outputLayout.size;
  const plus = new F64(m);
  const minus = new F64(m);
  const sums = new F64(K);
  const mags = new F64(K);
  for (let p = 0; p < count; p++) {
    progress.done = p;
    if (p % every === every - 1 && outOfTime()) {
      stopAtTimeLimit(`check of '${slot.name}' stopped at the time limit after ${p} of ${count} ${unit}`, { param: slot.name, stage: 'elements', done: p, total: count });
    }
    const i = indices[p];
    const x0 = slot.get(i);
    const step = centralStep(slot.precision, x0);
    // Finiteness is checked on the sums below, not per output: one pass instead of three.
    const xp = h.forwardAtElement(slot, i, x0 + step, plus, false);
    const xm = h.forwardAtElement(slot, i, x0 - step, minus, false);
    const denom = xp - xm;
    if (ws === null) {
      for (let k = 0; k < K; k++) {
        const a = plus[k];
        const b = minus[k];
        sums[k] = a - b;
        mags[k] = a === b && a - a === 0 ? 0 : (a < 0 ? -a : a) + (b < 0 ? -b : b);
      }
    } else {
      for (let k = 0; k < K; k++) {
        sums[k] = 0;
        mags[k] = 0;
      }
      // One pass over the outputs serves every probe; only outputs that moved enter the sums.
      for (let j = 0; j < m; j++) {
        const a = plus[j];
        const b = minus[j];
        if (a !== b) {
          const d = a - b;
          const mag = (a < 0 ? -a : a) + (b < 0 ? -b : b);
          for (let k = 0; k < K; k++) {
            const w = ws[k][j];
            sums[k] += w * d;
            mags[k] += (w < 0 ? -w : w) * mag;
          }
        }
      }
    }
    for (let k = 0; k < K; k++) {
      if (!(mags[k] < Infinity)) {
        // NaN or ±Infinity among the outputs: name where, as the baseline check would.
        h.forwardAtElement(slot, i, x0 + step, plus, true);
        h.forwardAtElement(slot, i, x0 - step, minus, true);
      }
      numeric[k][p] = sums[k] / denom;
      bound[k][p] = (ROUNDOFF_ULPS * uOut * mags[k]) / denom;
    }
  }
}
