// The per-element comparison of an analytic gradient value with a numeric estimate and its
// error bound, and the per-parameter error figures (max absolute/relative error, worst element).

import { F64, I32, U8, abs, max } from './builtins';

/**
 * Whether |a − n| exceeds what tolerance and the estimate's own error allow:
 * |a − n| > tol·max(|a|, |n|, floor) + bound. Returns the excess (> 0 means suspicious).
 * The floor is the level below which values count as zero (see relativeFloorFactor).
 */
export function excessOf(a: number, n: number, bound: number, tol: number, floor: number): number {
  return abs(a - n) - tol * max(abs(a), abs(n), floor) - bound;
}

/**
 * Relative error as reported: |a − n| / max(|a|, |n|, floor, bound/tol). Dividing by bound/tol
 * too means an element whose difference is within its estimate's error reports at most about
 * the tolerance, so two near-zero values, or an element the difference cannot resolve, never
 * show a huge "relative" error on a passing check.
 */
export function relativeError(a: number, n: number, bound: number, tol: number, floor: number): number {
  const d = abs(a - n);
  if (d === 0) return 0;
  const denom = max(abs(a), abs(n), floor, tol > 0 ? bound / tol : 0);
  return denom > 0 ? d / denom : d === 0 ? 0 : 1;
}

/** Numeric estimates of a set of elements of one parameter, for every upstream probe. */
export interface ElementEstimates {
  /** Element indices, in the order of the arrays below. */
  indices: ArrayLike<number>;
  /** numeric[k][pos]: estimate of (Jᵀ dy_k)[indices[pos]]. */
  numeric: Float64Array[];
  /** bound[k][pos]: the estimate's error bound (absolute). */
  bound: Float64Array[];
}

/** Where an element stands after comparison (and refinement); a byte per element. */
export const ElementState = { ok: 0, suspicious: 1, mismatch: 2, uncertain: 3, kink: 4 } as const;
export type ElementState = (typeof ElementState)[keyof typeof ElementState];

/** Figures of one parameter's comparison. */
export interface Comparison {
  /** Per position: worst excess over probes (> 0: suspicious). */
  excess: Float64Array;
  /** Per position: the probe with the worst excess. */
  worstProbe: Int32Array;
  /** Per position: relative error of the worst probe. */
  rel: Float64Array;
  state: Uint8Array;
  /** Per probe: the zero level (relative floor × largest value). */
  floors: Float64Array;
}

/** The level below which values of probe k count as zero: factor × the largest |a| or |n|. */
export function floorsFor(analytic: Float64Array[], est: ElementEstimates, floorFactor: number): Float64Array {
  const K = analytic.length;
  const floors = new F64(K);
  for (let k = 0; k < K; k++) {
    let g = 0;
    const a = analytic[k];
    const n = est.numeric[k];
    for (let p = 0; p < est.indices.length; p++) g = max(g, abs(a[est.indices[p]]), abs(n[p]));
    floors[k] = floorFactor * g;
  }
  return floors;
}

/** Compares every estimated element against the analytic values (excessOf and relativeError, inlined: this runs per element of million-element parameters). */
export function compareElements(analytic: Float64Array[], est: ElementEstimates, tol: number, floors: Float64Array): Comparison {
  const count = est.indices.length;
  const excess = new F64(count);
  const worstProbe = new I32(count);
  const rel = new F64(count);
  const state = new U8(count);
  const K = analytic.length;
  for (let p = 0; p < count; p++) {
    const i = est.indices[p];
    let best = -Infinity;
    let bestK = 0;
    for (let k = 0; k < K; k++) {
      const a = analytic[k][i];
      const n = est.numeric[k][p];
      const aa = a < 0 ? -a : a;
      const an = n < 0 ? -n : n;
      let scale = aa > an ? aa : an;
      if (floors[k] > scale) scale = floors[k];
      const d = a - n;
      const e = (d < 0 ? -d : d) - tol * scale - est.bound[k][p];
      if (e > best) {
        best = e;
        bestK = k;
      }
    }
    excess[p] = best;
    worstProbe[p] = bestK;
    // relativeError, inlined.
    const a = analytic[bestK][i];
    const n = est.numeric[bestK][p];
    const d = a < n ? n - a : a - n;
    if (d === 0) rel[p] = 0;
    else {
      let denom = a < 0 ? -a : a;
      if (n > denom) denom = n;
      else if (-n > denom) denom = -n;
      if (floors[bestK] > denom) denom = floors[bestK];
      const bt = tol > 0 ? est.bound[bestK][p] / tol : 0;
      if (bt > denom) denom = bt;
      rel[p] = denom > 0 ? d / denom : 1;
    }
    state[p] = best > 0 ? ElementState.suspicious : ElementState.ok;
  }
  return { excess, worstProbe, rel, state, floors };
}
