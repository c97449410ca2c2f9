// Evidence-backed hints about a mismatch. Each hint is a hypothesis about the backward's bug
// (flipped sign, constant factor, transposed, swapped with another parameter, wrong only for
// negative inputs, wrong at one index) that is reported only when every compared element
// with a clearly non-zero value agrees with it within HINT_TOLERANCE_FACTOR × the tolerance.

import { abs, formatIndex, formatNumber, fround, isInteger, max, round } from './builtins';
import { ElementState, type Comparison, type ElementEstimates } from './judge';
import { unravelSlot, type ParamSlot } from './paramSlot';

/**
 * A hypothesis "analytic ≈ T(numeric)" holds at an element when the gap is within this many
 * tolerances (plus the estimate's bound), dimensionless. The bugs hinted at are exact
 * transformations, so agreement is as good as the numeric estimate; 10 leaves room for it.
 */
export const HINT_TOLERANCE_FACTOR = 10;

/** Everything the hints need about one parameter's comparison. */
export interface ParamEvidence {
  slot: ParamSlot;
  analytic: Float64Array[];
  est: ElementEstimates;
  cmp: Comparison;
  tol: number;
  /** Whether every element of the parameter was compared (full or grouped check). */
  complete: boolean;
}

function isBad(ev: ParamEvidence, p: number): boolean {
  const s = ev.cmp.state[p];
  return s === ElementState.mismatch || s === ElementState.suspicious;
}

/** Whether a value is clearly non-zero for probe k at position p. */
function significant(ev: ParamEvidence, k: number, p: number, v: number): boolean {
  return abs(v) > max(ev.cmp.floors[k], (ev.est.bound[k][p] * 10) / 1) && abs(v) > 0;
}

function holds(ev: ParamEvidence, k: number, p: number, a: number, predicted: number): boolean {
  const tol = HINT_TOLERANCE_FACTOR * ev.tol;
  return abs(a - predicted) <= tol * max(abs(a), abs(predicted), ev.cmp.floors[k]) + ev.est.bound[k][p] * HINT_TOLERANCE_FACTOR;
}

/** Tests "analytic ≈ f(numeric)" over the bad elements; true only with at least one clear case. */
function badElementsFollow(ev: ParamEvidence, f: (n: number) => number): boolean {
  let support = 0;
  for (let p = 0; p < ev.est.indices.length; p++) {
    if (!isBad(ev, p)) continue;
    const i = ev.est.indices[p];
    for (let k = 0; k < ev.analytic.length; k++) {
      const n = ev.est.numeric[k][p];
      const a = ev.analytic[k][i];
      if (!significant(ev, k, p, n)) continue;
      if (!holds(ev, k, p, a, f(n))) return false;
      support++;
    }
  }
  // Two data points at least: one ratio fits any factor.
  return support >= 2;
}

/** A factor for messages: 2, 0.5, -3, 1.0001. */
function factorText(c: number): string {
  const r = round(c);
  if (r !== 0 && abs(c - r) <= 1e-9 * abs(c)) return formatNumber(r);
  return formatNumber(c, 6);
}

/** The ratio analytic/numeric at the clearest bad element, or NaN. */
function clearestRatio(ev: ParamEvidence): number {
  let best = 0;
  let ratio = NaN;
  for (let p = 0; p < ev.est.indices.length; p++) {
    if (!isBad(ev, p)) continue;
    const i = ev.est.indices[p];
    for (let k = 0; k < ev.analytic.length; k++) {
      const n = ev.est.numeric[k][p];
      if (significant(ev, k, p, n) && abs(n) > best) {
        best = abs(n);
        ratio = ev.analytic[k][i] / n;
      }
    }
  }
  return ratio;
}

function badPositions(ev: ParamEvidence): number[] {
  const out: number[] = [];
  for (let p = 0; p < ev.est.indices.length; p++) if (isBad(ev, p)) out[out.length] = p;
  return out;
}

/** Hints about one mismatching parameter. `others` are the op's other parameters (for "x < 0" on an input). */
export function paramHints(ev: ParamEvidence, others: ParamSlot[]): string[] {
  const hints: string[] = [];
  const slot = ev.slot;
  const bad = badPositions(ev);
  if (bad.length === 0) return hints;

  // Wrong only at one index: every other element was compared and agreed. A ratio at a single
  // element says nothing about a constant factor, so the factor hints below need more.
  const oneIndex = ev.complete && slot.size >= 2 && bad.length === 1;
  if (oneIndex) {
    const i = ev.est.indices[bad[0]];
    hints[hints.length] = `wrong only at ${slot.name}${formatIndex(unravelSlot(slot, i))}; every other element agrees`;
  }

  // Sign flipped, or a constant factor, over all disagreeing elements.
  if (oneIndex) {
    // no factor hints from one element
  } else if (badElementsFollow(ev, (n) => -n)) {
    hints[hints.length] = 'sign is flipped: the backward gives −1× the numeric gradient';
  } else {
    const c = clearestRatio(ev);
    if (c === c && c !== 0 && abs(c - 1) > HINT_TOLERANCE_FACTOR * ev.tol && badElementsFollow(ev, (n) => c * n)) {
      hints[hints.length] = `gradient is ${factorText(c)}× the numeric one`;
    }
  }

  // Transposed: a 2-D parameter whose gradient matches the numeric one read as its transpose.
  if (ev.complete && slot.shape.length === 2 && slot.shape[0] > 1 && slot.shape[1] > 1 && transposedHolds(ev)) {
    hints[hints.length] = `gradient looks transposed: it matches the numeric gradient laid out as ${slot.shape[1]}×${slot.shape[0]}`;
  }

  // Wrong only where an input is negative.
  if (ev.complete && bad.length >= 2) {
    const candidates: ParamSlot[] = [slot];
    for (let q = 0; q < others.length; q++) if (others[q] !== slot && others[q].size === slot.size) candidates[candidates.length] = others[q];
    for (let c = 0; c < candidates.length; c++) {
      const note = negativeOnly(ev, candidates[c], bad);
      if (note !== null) {
        hints[hints.length] = note;
        break;
      }
    }
  }
  return hints;
}

function transposedHolds(ev: ParamEvidence): boolean {
  const r = ev.slot.shape[0];
  const c = ev.slot.shape[1];
  const n = ev.slot.size;
  if (ev.est.indices.length !== n) return false;
  let support = 0;
  for (let k = 0; k < ev.analytic.length; k++) {
    for (let i = 0; i < r; i++) {
      for (let j = 0; j < c; j++) {
        const p = i * c + j; // element (i, j); positions are element indices in a complete check
        const numeric = ev.est.numeric[k][p];
        const a = ev.analytic[k][j * r + i];
        if (!significant(ev, k, p, numeric) && !significant(ev, k, p, a)) continue;
        if (!holds(ev, k, p, a, numeric)) return false;
        support++;
      }
    }
  }
  return support > 0;
}

/** "wrong only where x < 0" when every disagreeing element has x < 0 and most clear negative ones disagree. */
function negativeOnly(ev: ParamEvidence, input: ParamSlot, bad: number[]): string | null {
  let negatives = 0;
  let positives = 0;
  for (let p = 0; p < ev.est.indices.length; p++) {
    if (input.get(ev.est.indices[p]) < 0) negatives++;
    else positives++;
  }
  if (negatives < 2 || positives < 2) return null;
  for (let q = 0; q < bad.length; q++) if (!(input.get(ev.est.indices[bad[q]]) < 0)) return null;
  // At least half of the negative elements disagree: the condition explains the errors.
  if (bad.length * 2 < negatives) return null;
  return `wrong only where ${input.name} < 0 (${bad.length} of ${negatives} such elements disagree; none where ${input.name} ≥ 0)`;
}

/** Op-level hint: two parameters whose gradients are each other's. */
export function swapHints(evs: ParamEvidence[]): string[] {
  const hints: string[] = [];
  for (let p = 0; p < evs.length; p++) {
    for (let q = p + 1; q < evs.length; q++) {
      const a = evs[p];
      const b = evs[q];
      if (!a.complete || !b.complete || a.slot.size !== b.slot.size) continue;
      if (badPositions(a).length === 0 || badPositions(b).length === 0) continue;
      if (crossHolds(a, b) && crossHolds(b, a)) {
        hints[hints.length] = `the gradients of '${a.slot.name}' and '${b.slot.name}' look swapped: each matches the other's numeric gradient`;
      }
    }
  }
  return hints;
}

/** analytic of `a` ≈ numeric of `b`, element by element (both complete, same size). */
function crossHolds(a: ParamEvidence, b: ParamEvidence): boolean {
  let support = 0;
  for (let k = 0; k < a.analytic.length; k++) {
    for (let p = 0; p < b.est.indices.length; p++) {
      const n = b.est.numeric[k][p];
      const an = a.analytic[k][b.est.indices[p]];
      if (!significant(b, k, p, n) && !significant(b, k, p, an)) continue;
      if (!holds(b, k, p, an, n)) return false;
      support++;
    }
  }
  return support > 0;
}

/**
 * Outputs at least this many of which are non-integers before the float32 test means anything
 * (an integer-valued output is a float32 value whatever the precision). Our choice.
 */
const FLOAT32_EVIDENCE_VALUES = 4;

/**
 * A hint for an op sampled in float64 whose outputs are all float32 values (IEEE 754 binary32,
 * unit roundoff 2^-24): it computes in float32 inside (a tensor library's default), so its
 * finite differences carry float32 roundoff, not float64's 2^-53. Null when the outputs are not
 * all float32 values, or too few are non-integers to tell.
 */
export function float32OutputHint(y: Float64Array): string | null {
  let fractional = 0;
  for (let j = 0; j < y.length; j++) {
    const v = y[j];
    if (fround(v) !== v) return null;
    if (!isInteger(v)) fractional++;
  }
  if (fractional < FLOAT32_EVIDENCE_VALUES && fractional < y.length) return null;
  if (fractional === 0) return null;
  return 'the inputs are sampled as float64, but every output value is a float32 number: the forward computes in float32 inside (as tensor libraries do by default), so differences carry float32 roundoff (2^-24, not 2^-53); sample the inputs as f32 (`@sample x f32[...]`) to check with float32 tolerances, or make the forward compute in float64';
}
