// One adjoint dot-product probe along a random direction over a whole parameter, judged against
// the user's tolerance: the safety check of grouped estimates (check.ts), which looks for a
// coupling the structure probes did not see. For random u (output space) and v (parameter
// space), ⟨u, J v⟩ from one central difference along v must equal ⟨Jᵀu, v⟩ from the backward
// called with upstream gradient u (Griewank & Walther, Evaluating Derivatives, 2nd ed., SIAM
// 2008: the identity ⟨ȳ, ẏ⟩ = ⟨x̄, ẋ⟩ between tangent and adjoint modes). Probes that must see a
// single wrong element among millions are splitSearch.ts's, judged against their own error.

import { F64, abs, formatNumber, max, min } from './builtins';
import { fail } from './failure';
import { excessOf } from './judge';
import { findKink } from './kinkTest';
import { centralOnLine, directionLine } from './lines';
import type { OpHarness } from './opHarness';
import type { ParamSlot } from './paramSlot';
import { ROUNDOFF_ULPS } from './precision';
import { UNIT_ROUNDOFF_F64 } from './settings';
import { fillSigned, type RandomSource } from './random';
import { RIDDERS_ERROR_FACTOR } from './refine';
import { RIDDERS_MIN_INITIAL_CENTRAL_STEPS, riddersAdaptive } from './ridders';

export interface DotProbeResult {
  /** ⟨u, J v⟩ per unit step, from the central difference (or Ridders when refined). */
  numeric: number;
  /** ⟨Jᵀu, v⟩ from the backward. */
  analytic: number;
  /** Σ_i |(Jᵀu)_i v_i|: the magnitude the tolerance is relative to. */
  scale: number;
  /** Error bound of the numeric value (absolute). */
  bound: number;
  state: 'ok' | 'mismatch' | 'uncertain' | 'kink';
  relError: number;
}

/**
 * Runs the dot-product probes of one slot. `us[p]` is the upstream vector of probe p and
 * `grads[p]` the slot's gradient the backward returned for it.
 */
export function dotProductProbes(
  h: OpHarness,
  slot: ParamSlot,
  us: Float64Array[],
  grads: Float64Array[],
  y0: Float64Array,
  uOut: number,
  tol: number,
  random: RandomSource,
): DotProbeResult[] {
  const n = slot.size;
  const m = y0.length;
  const plus = new F64(m);
  const minus = new F64(m);
  const results: DotProbeResult[] = [];
  for (let p = 0; p < us.length; p++) {
    const v = fillSigned(random, new F64(n));
    const line = directionLine(h, slot, v);
    const g = grads[p];
    let analytic = 0;
    let scale = 0;
    for (let i = 0; i < n; i++) {
      const t = g[i] * line.scaled[i];
      analytic += t;
      scale += abs(t);
    }
    const t = line.centralStep;
    const sp = line.evalAt(t, plus);
    const sm = line.evalAt(-t, minus);
    if (sp !== sp || sm !== sm)
      fail(`forward output is not finite after moving every element of '${slot.name}' by a relative step of ${formatNumber(t, 3)} along a random direction`);
    let num = 0;
    let mag = 0;
    const w = us[p];
    for (let j = 0; j < m; j++) {
      if (plus[j] !== minus[j]) {
        num += w[j] * (plus[j] - minus[j]);
        mag += abs(w[j]) * (abs(plus[j]) + abs(minus[j]));
      }
    }
    const numeric = num / (sp - sm);
    // Roundoff of both evaluations through the projection, plus the summation of the analytic side.
    const bound = (ROUNDOFF_ULPS * uOut * mag) / (sp - sm) + ROUNDOFF_ULPS * UNIT_ROUNDOFF_F64 * scale;
    const result: DotProbeResult = { numeric, analytic, scale, bound, state: 'ok', relError: 0 };
    if (excessOf(analytic, numeric, bound, tol, scale) > 0) refineProbe(line, w, y0, uOut, tol, result, plus, minus);
    result.relError = abs(result.analytic - result.numeric) / max(result.scale, result.bound / tol, abs(result.numeric), 1e-300);
    results[p] = result;
  }
  return results;
}

function refineProbe(
  line: ReturnType<typeof directionLine>,
  w: Float64Array,
  y0: Float64Array,
  uOut: number,
  tol: number,
  result: DotProbeResult,
  plus: Float64Array,
  minus: Float64Array,
): void {
  const ws = [w];
  const floors = new F64(1);
  floors[0] = tol * result.scale;
  const discrepancy = new F64(1);
  discrepancy[0] = abs(result.analytic - result.numeric);
  const scan = findKink(line, y0, ws, uOut, tol, floors, discrepancy);
  if (scan.kink !== null) {
    result.state = 'kink';
    return;
  }
  const r = riddersAdaptive(
    (step) => centralOnLine(line, ws, step, plus, minus),
    min(line.refineStep, scan.smoothBelow),
    RIDDERS_MIN_INITIAL_CENTRAL_STEPS * line.centralStep,
    1,
    (n, e) => e <= tol * max(result.scale, abs(n)),
  );
  // As for elements (refine.ts): outputs whose change stays below their rounding hide it.
  let magnitude = 0;
  for (let j = 0; j < y0.length; j++) magnitude += abs(w[j]) * abs(y0[j]);
  const error = max(r.error[0], (ROUNDOFF_ULPS * uOut * magnitude) / r.initialStep[0]);
  result.numeric = r.value[0];
  result.bound = RIDDERS_ERROR_FACTOR * error;
  if (excessOf(result.analytic, result.numeric, result.bound, tol, result.scale) > 0 && error < Infinity) result.state = 'mismatch';
  else if (!(error <= tol * max(result.scale, abs(result.numeric)))) result.state = 'uncertain';
}
