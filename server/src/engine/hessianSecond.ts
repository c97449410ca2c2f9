// The second-difference reference of a @hessian op (no passing @backward to difference): the
// Hessian's columns and H·v by second differences of the forward (secondDifferences.ts, step
// u^(1/4), Nocedal & Wright §8.1), refined with Ridders before any entry is blamed; and the
// coordinates of the parameters taken as one vector, which the Hessian is indexed by.

import { F64, I32, abs, formatNumber, max } from './builtins';
import { fail, stopAtTimeLimit } from './failure';
import { ElementState, compareElements, excessOf, floorsFor, type ElementEstimates } from './judge';
import type { Baseline } from './kindBaseline';
import type { DirectionFinding, KindParamCheck } from './kindResult';
import { summariseBlock, type MatrixNaming } from './matrixCompare';
import type { OpHarness } from './opHarness';
import { elementName, type ParamSlot } from './paramSlot';
import { relativeFloorFactor } from './precision';
import { MAX_REFINED_ELEMENTS, type KinkReport } from './refine';
import { refineSecond, secondDifference, secondKink, secondStep, maxSecondStep, type Move } from './secondDifferences';

/** Global index g of the parameters taken as one vector: its slot and element. */
export interface Coords {
  slotOf: Int32Array;
  indexOf: Int32Array;
  offsets: number[];
  n: number;
}

export function coordsOf(slots: ParamSlot[]): Coords {
  let n = 0;
  const offsets: number[] = [];
  for (let s = 0; s < slots.length; s++) {
    offsets[s] = n;
    n += slots[s].size;
  }
  const slotOf = new I32(n);
  const indexOf = new I32(n);
  for (let s = 0; s < slots.length; s++)
    for (let i = 0; i < slots[s].size; i++) {
      slotOf[offsets[s] + i] = s;
      indexOf[offsets[s] + i] = i;
    }
  return { slotOf, indexOf, offsets, n };
}

/** One element moved by t·max(1, |x|) (a relative step). */
function unitMove(slot: ParamSlot, i: number): Move[] {
  const x = slot.get(i);
  const moves: Move[] = [];
  moves[0] = { slot, index: i, coef: max(1, abs(x)) };
  return moves;
}

/** The Hessian block of slot s's columns by second differences, refined before blame. */
export function secondDifferenceBlock(h: OpHarness, base: Baseline, c: Coords, s: number, rows: Float64Array[], naming: MatrixNaming, outOfTime: () => boolean): KindParamCheck {
  const slot = base.slots[s];
  const n = c.n;
  const t = secondStep(base.precision);
  const indices = new I32(slot.size);
  const numeric: Float64Array[] = [];
  const bound: Float64Array[] = [];
  for (let k = 0; k < n; k++) {
    numeric[k] = new F64(slot.size);
    bound[k] = new F64(slot.size);
  }
  // The engine's hard stop (OpHarness.stopAfter) reports this progress when a slow forward
  // reaches it between the clock reads.
  const progress = { param: slot.name, stage: 'elements' as const, done: 0, total: slot.size, unit: 'columns of second differences' };
  const outer = h.perturbation.progress;
  h.perturbation.progress = progress;
  try {
    for (let i = 0; i < slot.size; i++) {
      progress.done = i;
      indices[i] = i;
      if (outOfTime()) {
        stopAtTimeLimit(`check of '${slot.name}' stopped at the time limit after ${i} of ${slot.size} columns of second differences`, {
          param: slot.name,
          stage: 'elements',
          done: i,
          total: slot.size,
        });
      }
      const a = unitMove(slot, i);
      for (let k = 0; k < n; k++) {
        const b = unitMove(base.slots[c.slotOf[k]], c.indexOf[k]);
        const tt = max(0, t < maxSecondStep([a[0], b[0]]) ? t : maxSecondStep([a[0], b[0]]));
        const d = tt > 0 ? secondDifference(h, a, b, tt, base.uOut) : null;
        if (d === null) fail(`forward output is not finite at the second-difference points of ${elementName(slot, i)} and ${naming.rowName(k)}`);
        const scale = a[0].coef * b[0].coef;
        numeric[k][i] = d.value / scale;
        bound[k][i] = d.bound / scale;
      }
    }
  } finally {
    h.perturbation.progress = outer;
  }
  const est: ElementEstimates = { indices, numeric, bound };
  const floors = floorsFor(rows, est, relativeFloorFactor(base.precision));
  const cmp = compareElements(rows, est, base.tol, floors);
  // Refinement: Ridders on each out-of-tolerance entry of a suspicious column, worst column first.
  let confirmed = 0;
  let uncertain = 0;
  let unrefined = 0;
  let refined = 0;
  let uncertainNote = '';
  let kink: KinkReport | null = null;
  for (let i = 0; i < slot.size; i++) {
    if (cmp.state[i] !== ElementState.suspicious) continue;
    if (confirmed > 0 || refined >= MAX_REFINED_ELEMENTS || outOfTime()) {
      unrefined++;
      continue;
    }
    refined++;
    let state: ElementState = ElementState.ok;
    for (let k = 0; k < n; k++) {
      if (excessOf(rows[k][i], numeric[k][i], bound[k][i], base.tol, floors[k]) <= 0) continue;
      const a = unitMove(slot, i);
      const b = unitMove(base.slots[c.slotOf[k]], c.indexOf[k]);
      // A jump of the second derivative along either coordinate is a kink, never a mismatch.
      if (secondKink(h, a, base.precision, base.tol) || secondKink(h, b, base.precision, base.tol)) {
        state = ElementState.kink;
        if (kink === null) kink = { slot, index: i, value: slot.get(i), jump: 0 };
        break;
      }
      const scale = a[0].coef * b[0].coef;
      const r = refineSecond(h, a, b, base.precision, base.tol, rows[k][i] * scale, base.y0[0]);
      numeric[k][i] = r.value / scale;
      if (r.bound < Infinity) bound[k][i] = r.bound / scale;
      if (r.bound < Infinity && excessOf(rows[k][i], numeric[k][i], bound[k][i], base.tol, floors[k]) > 0) {
        state = ElementState.mismatch;
        cmp.worstProbe[i] = k;
      } else if (!r.settled && state === ElementState.ok) {
        state = ElementState.uncertain;
        if (uncertainNote === '')
          uncertainNote = `the second-difference estimate of H[${k}, ${naming.colOffset + i}] is unreliable (error ${formatNumber(r.bound, 3)} against a value of ${formatNumber(numeric[k][i], 6)}; hessian gives ${formatNumber(rows[k][i], 6)})`;
      }
    }
    cmp.state[i] = state;
    if (state === ElementState.mismatch) {
      confirmed++;
      const k = cmp.worstProbe[i];
      const d = abs(rows[k][i] - numeric[k][i]);
      cmp.rel[i] = d / max(abs(rows[k][i]), abs(numeric[k][i]), floors[k], bound[k][i] / base.tol);
    }
    if (state === ElementState.uncertain) uncertain++;
  }
  return summariseBlock(slot, rows, est, cmp, { confirmed, uncertain, unrefined, kink, uncertainNote }, base.tol, 'second-differences', naming);
}

/** (H·v)_k ≈ second difference along e_k and v, for every k, refined where it disagrees. */
export function hvpBySecondDifferences(
  h: OpHarness,
  base: Baseline,
  c: Coords,
  slot: ParamSlot,
  v: Float64Array,
  analytic: Float64Array,
  name: (g: number) => string,
): DirectionFinding {
  const t = secondStep(base.precision);
  const vMoves: Move[] = [];
  for (let i = 0; i < slot.size; i++) vMoves[i] = { slot, index: i, coef: v[i] };
  const out: DirectionFinding = { verdict: 'pass', note: '', maxAbs: 0, maxRel: 0, kink: null };
  const numeric = new F64(c.n);
  const bound = new F64(c.n);
  let largest = 0;
  for (let k = 0; k < c.n; k++) {
    const a = unitMove(base.slots[c.slotOf[k]], c.indexOf[k]);
    const all: Move[] = [a[0]];
    for (let i = 0; i < vMoves.length; i++) all[all.length] = vMoves[i];
    const tt = t < maxSecondStep(all) ? t : maxSecondStep(all);
    const d = secondDifference(h, a, vMoves, tt, base.uOut);
    if (d === null) fail(`forward output is not finite at the second-difference points of ${name(k)} along v`);
    numeric[k] = d.value / a[0].coef;
    bound[k] = d.bound / a[0].coef;
    largest = max(largest, abs(numeric[k]), abs(analytic[k]));
  }
  const floor = relativeFloorFactor(base.precision) * largest;
  let refined = 0;
  for (let k = 0; k < c.n; k++) {
    if (excessOf(analytic[k], numeric[k], bound[k], base.tol, floor) <= 0) continue;
    if (out.verdict === 'mismatch' || refined >= MAX_REFINED_ELEMENTS) break;
    refined++;
    const a = unitMove(base.slots[c.slotOf[k]], c.indexOf[k]);
    if (secondKink(h, a, base.precision, base.tol) || secondKink(h, vMoves, base.precision, base.tol)) {
      out.kink = { slot: base.slots[c.slotOf[k]], index: c.indexOf[k], value: base.slots[c.slotOf[k]].get(c.indexOf[k]), jump: 0 };
      if (out.verdict === 'pass') out.verdict = 'inconclusive';
      continue;
    }
    const r = refineSecond(h, a, vMoves, base.precision, base.tol, analytic[k] * a[0].coef, base.y0[0]);
    numeric[k] = r.value / a[0].coef;
    if (r.bound < Infinity) bound[k] = r.bound / a[0].coef;
    if (r.bound < Infinity && excessOf(analytic[k], numeric[k], bound[k], base.tol, floor) > 0) {
      out.verdict = 'mismatch';
      out.note = `H·v for a v of '${slot.name}' disagrees at ${name(k)}: hessian gives ${formatNumber(analytic[k])}, second differences ${formatNumber(numeric[k])} (relative error ${formatNumber(abs(analytic[k] - numeric[k]) / max(abs(analytic[k]), abs(numeric[k]), floor), 3)})`;
    } else if (!r.settled && out.verdict === 'pass') {
      out.verdict = 'inconclusive';
      out.note = `the second-difference estimate of (H·v) at ${name(k)} is unreliable (error ${formatNumber(r.bound, 3)})`;
    }
  }
  for (let k = 0; k < c.n; k++) {
    const gap = abs(analytic[k] - numeric[k]);
    out.maxAbs = max(out.maxAbs, gap);
    if (gap > 0) out.maxRel = max(out.maxRel, gap / max(abs(analytic[k]), abs(numeric[k]), floor, bound[k] / base.tol));
  }
  return out;
}
