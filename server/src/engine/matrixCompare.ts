// Entry-by-entry comparison of a derivative matrix with finite differences: the Jacobian of a
// @jacobian op (rows: forward outputs) and the Hessian of a @hessian op read as the Jacobian of
// its gradient (rows: gradient entries). Each column is one central difference per element;
// suspicious columns go through the same refinement as a @backward (kink test, then Ridders),
// so an entry is blamed only beyond tolerance plus the estimate's own error.

import { F64, abs, formatNumber, max } from './builtins';
import { clockEvery, estimateUnitColumns } from './fullCheck';
import { ElementState, compareElements, excessOf, floorsFor, type Comparison, type ElementEstimates } from './judge';
import { HINT_TOLERANCE_FACTOR } from './hints';
import type { ForwardMap } from './forwardMap';
import { elementName, unravelSlot, type ParamSlot } from './paramSlot';
import { relativeFloorFactor, type Precision } from './precision';
import { kindParamResult, type KindParamCheck } from './kindResult';
import { refineSuspicious, type RefineSummary } from './refine';
import type { ParamResult, CheckMethod } from '../model/types';

/** How a matrix and its rows are named in messages. */
export interface MatrixNaming {
  /** `J`, `J_q`, `H`. */
  symbol: string;
  /** Column index of the slot's first element in the matrix (several parameters of a Hessian). */
  colOffset: number;
  /** What row k is: `output 1`, `x[0]`. */
  rowName: (k: number) => string;
  /** What gave the analytic value: `jacobian`, `hessian`. */
  analyticWord: string;
  /** What gave the numeric value: `finite differences`, `differences of the gradient`. */
  numericWord: string;
}

/** Rows of a row-major m×n matrix as separate arrays (the analytic side of the comparison). */
export function matrixRows(a: Float64Array, m: number, n: number): Float64Array[] {
  const rows: Float64Array[] = [];
  for (let k = 0; k < m; k++) {
    const r = new F64(n);
    for (let i = 0; i < n; i++) r[i] = a[k * n + i];
    rows[k] = r;
  }
  return rows;
}

interface Entry {
  k: number;
  i: number;
}

/** Entries still out of tolerance after refinement (refined columns carry Ridders' values). */
function badEntries(analytic: Float64Array[], est: ElementEstimates, cmp: Comparison, tol: number): Entry[] {
  const out: Entry[] = [];
  for (let i = 0; i < cmp.state.length; i++) {
    const st = cmp.state[i];
    if (st !== ElementState.mismatch && st !== ElementState.suspicious) continue;
    for (let k = 0; k < analytic.length; k++) {
      if (excessOf(analytic[k][i], est.numeric[k][i], est.bound[k][i], tol, cmp.floors[k]) > 0) out[out.length] = { k, i };
    }
  }
  return out;
}

/** Whether a ≈ predicted within HINT_TOLERANCE_FACTOR tolerances (plus the estimate's bound). */
function near(a: number, predicted: number, tol: number, floor: number, bound: number): boolean {
  return abs(a - predicted) <= HINT_TOLERANCE_FACTOR * (tol * max(abs(a), abs(predicted), floor) + bound);
}

/** Hints about a mismatching matrix: one entry, one row, one column, sign, factor, transposed. */
export function matrixHints(analytic: Float64Array[], est: ElementEstimates, cmp: Comparison, tol: number, slot: ParamSlot, naming: MatrixNaming): string[] {
  const hints: string[] = [];
  const bad = badEntries(analytic, est, cmp, tol);
  if (bad.length === 0) return hints;
  const m = analytic.length;
  const n = slot.size;
  const col = (i: number): number => naming.colOffset + i;
  if (bad.length === 1 && m * n > 1) {
    const e = bad[0];
    hints[hints.length] = `only ${naming.symbol}[${e.k}, ${col(e.i)}] is wrong (${naming.rowName(e.k)}, ${elementName(slot, e.i)}); every other entry agrees`;
  } else if (bad.length >= 2) {
    let sameRow = true;
    let sameCol = true;
    for (let q = 1; q < bad.length; q++) {
      if (bad[q].k !== bad[0].k) sameRow = false;
      if (bad[q].i !== bad[0].i) sameCol = false;
    }
    if (sameRow && m > 1) hints[hints.length] = `only row ${bad[0].k} (${naming.rowName(bad[0].k)}) is wrong: ${bad.length} of its ${n} entries disagree`;
    if (sameCol && n > 1) hints[hints.length] = `only column ${col(bad[0].i)} (${elementName(slot, bad[0].i)}) is wrong: ${bad.length} of its ${m} entries disagree`;
    // Sign or a constant factor over every wrong entry (two at least: one ratio fits any factor).
    let ratio = NaN;
    let best = 0;
    for (let q = 0; q < bad.length; q++) {
      const nv = est.numeric[bad[q].k][bad[q].i];
      if (abs(nv) > best) {
        best = abs(nv);
        ratio = analytic[bad[q].k][bad[q].i] / nv;
      }
    }
    if (ratio === ratio && ratio !== 0) {
      let all = true;
      for (let q = 0; q < bad.length && all; q++) {
        const { k, i } = bad[q];
        if (!near(analytic[k][i], ratio * est.numeric[k][i], tol, cmp.floors[k], est.bound[k][i])) all = false;
      }
      if (all && abs(ratio + 1) <= HINT_TOLERANCE_FACTOR * tol) hints[hints.length] = `sign is flipped: the ${naming.analyticWord} gives −1× the numeric entries`;
      else if (all) hints[hints.length] = `the wrong entries are ${formatNumber(ratio, 6)}× the numeric ones`;
    }
  }
  // Transposed: a square matrix that matches the numeric one with rows and columns exchanged.
  if (m === n && n > 1 && naming.colOffset === 0) {
    let holds = true;
    let support = 0;
    for (let k = 0; k < m && holds; k++) {
      for (let i = 0; i < n && holds; i++) {
        const a = analytic[k][i];
        const t = est.numeric[i][k];
        if (!near(a, t, tol, max(cmp.floors[k], cmp.floors[i]), est.bound[i][k])) holds = false;
        else if (abs(a - est.numeric[k][i]) > 0) support++;
      }
    }
    if (holds && support > 0)
      hints[hints.length] =
        `the matrix looks transposed: it matches the numeric one with rows and columns exchanged (rows must be ${naming.symbol === 'H' ? 'gradient entries' : 'outputs'})`;
  }
  return hints;
}

/**
 * Compares one slot's block of the matrix (analytic rows, m×n_s) with central differences of
 * `f`, refines, and summarises into the slot's result.
 */
export function checkMatrixBlock(
  f: ForwardMap,
  slot: ParamSlot,
  analytic: Float64Array[],
  y0: Float64Array,
  ws: Float64Array[],
  uOut: number,
  tol: number,
  precision: Precision,
  method: CheckMethod,
  naming: MatrixNaming,
  outOfTime: () => boolean,
  forwardMs: number,
): KindParamCheck {
  const m = analytic.length;
  const est = estimateUnitColumns(f, slot, m, uOut, outOfTime, clockEvery(forwardMs));
  const floorPrecision: Precision = slot.precision === 'f32' || precision === 'f32' ? 'f32' : 'f64';
  const floors = floorsFor(analytic, est, relativeFloorFactor(floorPrecision));
  const cmp = compareElements(analytic, est, tol, floors);
  const refine = refineSuspicious(f, slot, analytic, est, cmp, ws, y0, uOut, tol, outOfTime, false);
  return summariseBlock(slot, analytic, est, cmp, refine, tol, method, naming);
}

export function summariseBlock(
  slot: ParamSlot,
  analytic: Float64Array[],
  est: ElementEstimates,
  cmp: Comparison,
  refine: RefineSummary,
  tol: number,
  method: CheckMethod,
  naming: MatrixNaming,
): KindParamCheck {
  let maxAbs = 0;
  let maxRel = 0;
  let worstPos = -1;
  let worstPriority = -1;
  for (let p = 0; p < est.indices.length; p++) {
    for (let k = 0; k < analytic.length; k++) maxAbs = max(maxAbs, abs(analytic[k][p] - est.numeric[k][p]));
    const state = cmp.state[p];
    const priority = state === ElementState.mismatch ? 2 : state === ElementState.suspicious || state === ElementState.uncertain ? 1 : 0;
    if (priority > worstPriority || (priority === worstPriority && cmp.rel[p] > cmp.rel[worstPos])) {
      worstPos = p;
      worstPriority = priority;
    }
    maxRel = max(maxRel, cmp.rel[p]);
  }
  let verdict: ParamResult['verdict'] = 'pass';
  let note = '';
  if (refine.confirmed > 0 && worstPos >= 0) {
    verdict = 'mismatch';
    const k = cmp.worstProbe[worstPos];
    const i = worstPos;
    note = `${naming.symbol}[${k}, ${naming.colOffset + i}] (${naming.rowName(k)}, ${elementName(slot, i)}): ${naming.analyticWord} gives ${formatNumber(analytic[k][i])}, ${naming.numericWord} ${formatNumber(est.numeric[k][i])} (relative error ${formatNumber(cmp.rel[worstPos], 3)})`;
  } else if (refine.uncertain > 0 || refine.unrefined > 0) {
    verdict = 'inconclusive';
    note =
      refine.uncertainNote !== ''
        ? `'${slot.name}': ${refine.uncertainNote}`
        : `'${slot.name}': ${refine.unrefined} suspicious column${refine.unrefined === 1 ? '' : 's'} could not be refined within the limits`;
  }
  const worst =
    worstPos >= 0
      ? {
          index: unravelSlot(slot, worstPos),
          analytic: analytic[cmp.worstProbe[worstPos]][worstPos],
          numeric: est.numeric[cmp.worstProbe[worstPos]][worstPos],
          relError: cmp.rel[worstPos],
        }
      : null;
  const result = kindParamResult(slot, {
    verdict,
    method,
    maxAbs,
    maxRel,
    worst,
    checkedElements: est.indices.length,
    hints: verdict === 'mismatch' ? matrixHints(analytic, est, cmp, tol, slot, naming) : [],
  });
  // Every entry compared on its own against the tolerance: a single wrong entry above it is
  // caught, so the floor is the tolerance itself (as for a full check of a backward).
  if (est.indices.length === slot.size) result.detectionFloor = tol;
  return { result, kink: refine.kink, note };
}
