// Grouped check: structurally orthogonal elements (no output depends on two of them) are
// perturbed together, and each moved output is credited to the one element whose band holds it
// (Curtis, Powell & Reid, "On the estimation of sparse Jacobian matrices", J. Inst. Math. Appl.
// 13 (1974) 117–119). An elementwise op's whole diagonal comes from one pair of forward calls.

import { F64, I32, abs, max, min } from './builtins';
import { stopAtTimeLimit } from './failure';
import type { ElementEstimates } from './judge';
import { anchorOf, type Structure } from './methodChoice';
import type { OpHarness } from './opHarness';
import type { ParamSlot } from './paramSlot';
import { ROUNDOFF_ULPS, relativeStep } from './precision';

/**
 * Estimates every element of a slot with one pair of forward calls per colour class. Returns
 * null when an output moved outside every band of its group: the structure hypothesis was
 * wrong, and the caller falls back to another method (never to a verdict).
 */
export function estimateGrouped(h: OpHarness, slot: ParamSlot, st: Structure, ws: Float64Array[], uOut: number, outOfTime: () => boolean): ElementEstimates | null {
  const n = slot.size;
  const m = st.m;
  const K = ws.length;
  const indices = new I32(n);
  for (let i = 0; i < n; i++) indices[i] = i;
  const numeric: Float64Array[] = [];
  const bound: Float64Array[] = [];
  for (let k = 0; k < K; k++) {
    numeric[k] = new F64(n);
    bound[k] = new F64(n);
  }
  const x0 = slot.snapshot();
  const denom = new F64(n);
  const plus = new F64(m);
  const minus = new F64(m);
  const sums = new F64(K);
  const mags = new F64(K);
  const rel = relativeStep(slot.precision);
  const typed = slot.typed;
  for (let g = 0; g < st.colours; g++) {
    if (outOfTime()) {
      stopAtTimeLimit(`check of '${slot.name}' stopped at the time limit after ${g} of ${st.colours} grouped perturbations`, {
        param: slot.name,
        stage: 'grouped perturbations',
        done: g,
        total: st.colours,
      });
    }
    const restore = (): void => {
      if (typed !== null) for (let i = g; i < n; i += st.colours) typed[i] = x0[i];
      else for (let i = g; i < n; i += st.colours) slot.set(i, x0[i]);
    };
    // x + h: every element of colour g moves by its own step u^(1/3)·max(1, |x_i|).
    const movePlus = (): void => {
      if (typed !== null) {
        for (let i = g; i < n; i += st.colours) {
          const x = x0[i];
          typed[i] = x + rel * (x < -1 ? -x : x > 1 ? x : 1);
          denom[i] = typed[i];
        }
      } else {
        for (let i = g; i < n; i += st.colours) denom[i] = slot.set(i, x0[i] + rel * max(1, abs(x0[i])));
      }
    };
    const moveMinus = (): void => {
      if (typed !== null) {
        for (let i = g; i < n; i += st.colours) {
          const x = x0[i];
          typed[i] = x - rel * (x < -1 ? -x : x > 1 ? x : 1);
          denom[i] -= typed[i];
        }
      } else {
        for (let i = g; i < n; i += st.colours) denom[i] -= slot.set(i, x0[i] - rel * max(1, abs(x0[i])));
      }
    };
    h.forwardMoved(slot, 0, true, movePlus, restore, plus, true);
    h.forwardMoved(slot, 0, true, moveMinus, restore, minus, true);
    if (st.colours === 1 && st.lo === 0 && st.hi === 0 && n === m) {
      // Diagonal Jacobian (elementwise op): output i belongs to element i; no band bookkeeping.
      for (let k = 0; k < K; k++) {
        const w = ws[k];
        const num = numeric[k];
        const bnd = bound[k];
        for (let i = 0; i < n; i++) {
          const p = plus[i];
          const q = minus[i];
          if (p !== q) {
            const wa = w[i] < 0 ? -w[i] : w[i];
            num[i] = (w[i] * (p - q)) / denom[i];
            bnd[i] = (ROUNDOFF_ULPS * uOut * wa * ((p < 0 ? -p : p) + (q < 0 ? -q : q))) / denom[i];
          } else {
            num[i] = 0;
            bnd[i] = 0;
          }
        }
      }
      continue;
    }
    // Every moved output must lie in the band of exactly one element of the group.
    let movedTotal = 0;
    for (let j = 0; j < m; j++) if (plus[j] !== minus[j]) movedTotal++;
    if (creditBands(st, g, n, m, ws, plus, minus, denom, ROUNDOFF_ULPS * uOut, numeric, bound, sums, mags) !== movedTotal) return null;
  }
  return { indices, numeric, bound };
}

/**
 * Credits the outputs that moved in the band (or block) of each element i of colour g to i:
 * numeric[k][i] and bound[k][i] from one pass over the band serving every upstream vector, as in
 * fullCheck.ts. Returns the number of moved outputs met in the bands (the caller compares it
 * with every moved output). `sums` and `mags` are scratch of length K.
 */
function creditBands(
  st: Structure,
  g: number,
  n: number,
  m: number,
  ws: Float64Array[],
  plus: Float64Array,
  minus: Float64Array,
  denom: Float64Array,
  roundoff: number,
  numeric: Float64Array[],
  bound: Float64Array[],
  sums: Float64Array,
  mags: Float64Array,
): number {
  const K = ws.length;
  const B = st.block ?? 0;
  let movedInBands = 0;
  for (let i = g; i < n; i += st.colours) {
    // Block model: element i owns its block's outputs; band model: the band around its anchor.
    const a = anchorOf(i, n, m);
    const jLo = B > 0 ? B * ((i / B) | 0) : max(0, a + st.lo);
    const jHi = B > 0 ? jLo + B - 1 : min(m - 1, a + st.hi);
    for (let k = 0; k < K; k++) {
      sums[k] = 0;
      mags[k] = 0;
    }
    for (let j = jLo; j <= jHi; j++) {
      const p = plus[j];
      const q = minus[j];
      if (p !== q) {
        movedInBands++;
        const d = p - q;
        const mag = (p < 0 ? -p : p) + (q < 0 ? -q : q);
        for (let k = 0; k < K; k++) {
          const w = ws[k][j];
          sums[k] += w * d;
          mags[k] += (w < 0 ? -w : w) * mag;
        }
      }
    }
    const d = denom[i];
    for (let k = 0; k < K; k++) {
      numeric[k][i] = sums[k] / d;
      bound[k][i] = (roundoff * mags[k]) / d;
    }
  }
  return movedInBands;
}
