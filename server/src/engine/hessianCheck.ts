// Checks a @hessian op (a forward that returns a number): the function returns the Hessian
// over the differentiated parameters taken as one vector (n×n), or with `$v` the product H·v.
// Reference: central differences of the op's @backward when that backward passes its own check
// (first differences of an exact gradient), else second differences of the forward
// (secondDifferences.ts). The message says which reference was used.

import { F64, I32, abs, formatNumber, max, sliceText, newOpList } from './builtins';
import { CheckStop, fail } from './failure';
import { readGradients } from './gradients';
import { GradientMap } from './gradientMap';
import { ElementState, compareElements, excessOf, floorsFor, type ElementEstimates } from './judge';
import { assemble } from './jacobianCheck';
import { checkUnchanged, combinedVerdict, readingResult, runAttempts, takeBaseline, unitVectors, type AttemptContext, type AttemptResult, type Baseline } from './kindBaseline';
import { directionLine } from './lines';
import { checkMatrixBlock, summariseBlock, type MatrixCheck, type MatrixNaming } from './matrixCompare';
import { readMatrix } from './matrixRead';
import { OpHarness, elementName } from './opHarness';
import type { ParamSlot } from './paramSlot';
import { relativeFloorFactor } from './precision';
import { STREAM, STREAM_STRIDE, fillSigned, substream } from './random';
import { MAX_REFINED_ELEMENTS, type KinkReport } from './refine';
import { refineSecond, requireNumberOutput, secondDifference, secondKink, secondStep, maxSecondStep, type Move } from './secondDifferences';
import type { CheckSettings } from './settings';
import { compareAlongLine, shapedLike } from './tangentCheck';
import type { BackwardArg, CheckOutcome, OpDescriptor, ParamResult, Verdict } from '../model/types';

/** Checks an op's @backward on its own (runCheck, passed in to keep the module graph acyclic). */
export type BackwardRunner = (op: OpDescriptor, settings: CheckSettings) => CheckOutcome;

/** Share of the time limit the check of the @backward (the Hessian's reference) may take. */
const REFERENCE_TIME_SHARE = 0.4;

interface Reference {
  /** The @backward op when it passed, else null (second differences). */
  gradientOp: OpDescriptor | null;
  note: string;
  /** Calls the check of the @backward made. */
  calls: { forward: number; backward: number };
}

function chooseReference(op: OpDescriptor, settings: CheckSettings, runBackward: BackwardRunner): Reference {
  const g = op.gradient;
  if (g === undefined) return { gradientOp: null, note: 'reference: second differences of the forward (step u^(1/4); the op has no @backward)', calls: { forward: 0, backward: 0 } };
  const gradientOp: OpDescriptor = {
    ...op,
    kind: 'backward',
    backward: g.name,
    target: { ...op.target, backwardName: g.backwardName, backwardIsMethod: g.backwardIsMethod },
    backwardArgs: g.args,
    problems: [],
  };
  delete gradientOp.gradient;
  const outcome = runBackward(gradientOp, { ...settings, timeLimitMs: settings.timeLimitMs * REFERENCE_TIME_SHARE, stepScans: 'none' });
  if (outcome.verdict === 'pass') return { gradientOp, note: `reference: central differences of the @backward '${g.name}', which passes`, calls: outcome.calls };
  return { gradientOp: null, note: `reference: second differences of the forward (step u^(1/4)), because the @backward '${g.name}' did not pass (${outcome.verdict})`, calls: outcome.calls };
}

export function runHessianCheck(
  exposed: Record<string, unknown>,
  op: OpDescriptor,
  settings: CheckSettings,
  seed: number,
  deadline: number,
  clock: () => number,
  runBackward: BackwardRunner,
): CheckOutcome {
  const h = new OpHarness(op, exposed);
  let reference: Reference = { gradientOp: null, note: '', calls: { forward: 0, backward: 0 } };
  let hg: OpHarness | null = null;
  let extraCalls = { forward: 0, backward: 0 };
  const outcome = runAttempts(h, op, settings, seed, deadline, clock, (ctx) => {
    if (ctx.attempt === 0) {
      reference = chooseReference(op, settings, runBackward);
      if (reference.gradientOp !== null) {
        hg = new OpHarness(reference.gradientOp, exposed);
        extraCalls = hg.calls;
      }
    }
    return hessianAttempt(ctx, hg);
  });
  // Every call counts: the Hessian's own, the gradient map's, and the check of the @backward.
  outcome.calls = {
    forward: outcome.calls.forward + extraCalls.forward + reference.calls.forward,
    backward: outcome.calls.backward + extraCalls.backward + reference.calls.backward,
  };
  if (reference.note !== '' && outcome.verdict !== 'error') outcome.message = outcome.message ? `${outcome.message}; ${reference.note}` : reference.note;
  return outcome;
}

/** Global index g of the parameters taken as one vector: its slot and element. */
interface Coords {
  slotOf: Int32Array;
  indexOf: Int32Array;
  offsets: number[];
  n: number;
}

function coordsOf(slots: ParamSlot[]): Coords {
  let n = 0;
  const offsets: number[] = [];
  for (let s = 0; s < slots.length; s++) {
    offsets[s] = n;
    n += slots[s].size;
  }
  const slotOf = new I32(n);
  const indexOf = new I32(n);
  for (let s = 0; s < slots.length; s++) for (let i = 0; i < slots[s].size; i++) {
    slotOf[offsets[s] + i] = s;
    indexOf[offsets[s] + i] = i;
  }
  return { slotOf, indexOf, offsets, n };
}

function hessianAttempt(ctx: AttemptContext, hg: OpHarness | null): AttemptResult {
  const { h, op, settings } = ctx;
  const base = takeBaseline(h, op, settings, ctx.stream(STREAM.inputs), ctx.clock);
  requireNumberOutput(base.y0.length, base.layout.kind === 'number' ? 'a number' : 'an array or object');
  const c = coordsOf(base.slots);
  const gm = hg !== null ? new GradientMap(hg, base.slots) : null;
  if (hg !== null) hg.adoptSample(h);
  let hvp = false;
  for (let q = 0; q < op.backwardArgs.length; q++) if (op.backwardArgs[q].kind === 'vector') hvp = true;
  const name = (g: number): string => elementName(base.slots[c.slotOf[g]], c.indexOf[g]);
  return hvp ? hvpAttempt(ctx, base, c, gm, name) : matrixAttempt(ctx, base, c, gm, name);
}

function matrixAttempt(ctx: AttemptContext, base: Baseline, c: Coords, gm: GradientMap | null, name: (g: number) => string): AttemptResult {
  const { h, op } = ctx;
  const { slots, y0 } = base;
  const n = c.n;
  const what = `hessian '${op.backward}'`;
  const raw = h.derivativeRaw(y0, () => undefined);
  checkUnchanged(h, base, what);
  const H = readingResult(what, () => readMatrix(raw, n, n, `${what} result`, `${n} gradient entr${n === 1 ? 'y' : 'ies'}`, `${n} parameter element${n === 1 ? '' : 's'}`));
  for (let e = 0; e < H.length; e++) {
    if (H[e] - H[e] !== 0) fail(`${what} result has ${H[e] !== H[e] ? 'NaN' : 'an infinite value'} at H[${(e - (e % n)) / n}, ${e % n}]`);
  }
  const asymmetry = asymmetryHint(H, n, base.tol, name);
  const checks: MatrixCheck[] = [];
  const g0 = gm !== null ? gm.forwardInto(null, true) : null;
  const ws = gm !== null ? unitVectors(n) : [];
  for (let s = 0; s < slots.length; s++) {
    const slot = slots[s];
    const rows: Float64Array[] = [];
    for (let k = 0; k < n; k++) {
      const r = new F64(slot.size);
      for (let i = 0; i < slot.size; i++) r[i] = H[k * n + c.offsets[s] + i];
      rows[k] = r;
    }
    const naming: MatrixNaming = {
      symbol: 'H',
      colOffset: c.offsets[s],
      rowName: name,
      analyticWord: 'hessian',
      numericWord: gm !== null ? 'differences of the gradient' : 'second differences',
    };
    checks[s] = gm !== null && g0 !== null
      ? checkMatrixBlock(gm, slot, rows, g0, ws, base.uOut, base.tol, base.precision, 'gradient-differences', naming, ctx.outOfTime)
      : secondDifferenceBlock(h, base, c, s, rows, naming, ctx.outOfTime);
  }
  if (asymmetry !== '') {
    for (let s = 0; s < checks.length; s++) if (checks[s].result.verdict === 'mismatch') checks[s].result.hints[checks[s].result.hints.length] = asymmetry;
  }
  return assemble(ctx, checks, base.inputs, '');
}

/** "not symmetric: H[0, 1] = 3 but H[1, 0] = 2" for the worst asymmetric pair, or ''. */
function asymmetryHint(H: Float64Array, n: number, tol: number, name: (g: number) => string): string {
  let worst = 0;
  let wa = -1;
  let wb = -1;
  let largest = 0;
  for (let e = 0; e < H.length; e++) largest = max(largest, abs(H[e]));
  for (let a = 0; a < n; a++) {
    for (let b = a + 1; b < n; b++) {
      const x = H[a * n + b];
      const y = H[b * n + a];
      const gap = abs(x - y) / max(abs(x), abs(y), largest * 1e-8, 1e-300);
      if (gap > tol && gap > worst) {
        worst = gap;
        wa = a;
        wb = b;
      }
    }
  }
  if (wa < 0) return '';
  return `the Hessian is not symmetric: H[${wa}, ${wb}] = ${formatNumber(H[wa * n + wb])} (${name(wa)}, ${name(wb)}) but H[${wb}, ${wa}] = ${formatNumber(H[wb * n + wa])}; second derivatives of a smooth function commute`;
}

/** One element moved by t·max(1, |x|) (a relative step). */
function unitMove(slot: ParamSlot, i: number): Move[] {
  const x = slot.get(i);
  const moves: Move[] = [];
  moves[0] = { slot, index: i, coef: max(1, abs(x)) };
  return moves;
}

/** The Hessian block of slot s's columns by second differences, refined before blame. */
function secondDifferenceBlock(h: OpHarness, base: Baseline, c: Coords, s: number, rows: Float64Array[], naming: MatrixNaming, outOfTime: () => boolean): MatrixCheck {
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
  for (let i = 0; i < slot.size; i++) {
    indices[i] = i;
    if (outOfTime()) fail(`check of '${slot.name}' stopped at the time limit after ${i} of ${slot.size} columns of second differences`);
    const a = unitMove(slot, i);
    for (let k = 0; k < n; k++) {
      const b = unitMove(base.slots[c.slotOf[k]], c.indexOf[k]);
      const tt = max(0, (t < maxSecondStep([a[0], b[0]]) ? t : maxSecondStep([a[0], b[0]])));
      const d = tt > 0 ? secondDifference(h, a, b, tt, base.uOut) : null;
      if (d === null) fail(`forward output is not finite at the second-difference points of ${elementName(slot, i)} and ${naming.rowName(k)}`);
      const scale = a[0].coef * b[0].coef;
      numeric[k][i] = d.value / scale;
      bound[k][i] = d.bound / scale;
    }
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
        if (uncertainNote === '') uncertainNote = `the second-difference estimate of H[${k}, ${naming.colOffset + i}] is unreliable (error ${formatNumber(r.bound, 3)} against a value of ${formatNumber(numeric[k][i], 6)}; hessian gives ${formatNumber(rows[k][i], 6)})`;
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

/** $v for slot s's direction (zeros in the other parameters): one part, or one per parameter. */
function vectorValue(slots: ParamSlot[], s: number, v: Float64Array): unknown {
  if (slots.length === 1) return shapedLike(slots[0].value(), v, { i: 0 });
  const parts = newOpList();
  for (let q = 0; q < slots.length; q++) parts[q] = shapedLike(slots[q].value(), q === s ? v : new F64(slots[q].size), { i: 0 });
  return parts;
}

/** Reads H·v (one part per parameter) into one flat vector in declaration order. */
function readProduct(raw: unknown, slots: ParamSlot[], c: Coords, what: string): Float64Array {
  const parts: Float64Array[] = [];
  for (let s = 0; s < slots.length; s++) parts[s] = new F64(slots[s].size);
  try {
    readGradients(raw, slots, parts);
  } catch (e) {
    if (!(e instanceof CheckStop)) throw e;
    const msg = e.message;
    // The reader speaks of a backward's gradients; here it is a Hessian-vector product.
    fail(`${what}: ${sliceText(msg, 0, 10) === 'backward: ' ? sliceText(msg, 10) : msg} (H·v has one part per parameter, shaped like it)`);
  }
  const out = new F64(c.n);
  for (let s = 0; s < slots.length; s++) for (let i = 0; i < slots[s].size; i++) out[c.offsets[s] + i] = parts[s][i];
  return out;
}

function hvpAttempt(ctx: AttemptContext, base: Baseline, c: Coords, gm: GradientMap | null, name: (g: number) => string): AttemptResult {
  const { h, op, settings } = ctx;
  const { slots, y0 } = base;
  const what = `hessian '${op.backward}'`;
  const probes = max(1, settings.upstreamProbes);
  const g0 = gm !== null ? gm.forwardInto(null, true) : null;
  const params: ParamResult[] = [];
  let message = '';
  let kink: KinkReport | null = null;
  for (let s = 0; s < slots.length; s++) {
    const slot = slots[s];
    const random = substream(ctx.seed, ctx.attempt * STREAM_STRIDE + STREAM.directions, s);
    let verdict: Verdict = 'pass';
    let note = '';
    let maxAbs = 0;
    let maxRel = 0;
    for (let p = 0; p < probes && verdict !== 'mismatch'; p++) {
      const d = fillSigned(random, new F64(slot.size));
      // directionLine scales the direction per element by max(1, |x|): that scaled vector is v.
      const line = directionLine(gm ?? h, slot, d);
      const v = line.scaled;
      const placeholder = (a: BackwardArg): unknown => (a.kind === 'vector' ? vectorValue(slots, s, v) : undefined);
      // A method's derivative may read state its forward cached: run the forward at the sample point first.
      if (h.backwardNeedsFreshForward) h.forwardInto(new F64(1), true);
      const raw = h.derivativeRaw(y0, placeholder);
      checkUnchanged(h, base, what);
      const analytic = readingResult(what, () => readProduct(raw, slots, c, what));
      for (let k = 0; k < c.n; k++) if (analytic[k] - analytic[k] !== 0) fail(`${what} result has ${analytic[k] !== analytic[k] ? 'NaN' : 'an infinite value'} at ${name(k)}`);
      if (gm !== null && g0 !== null) {
        const cmp = compareAlongLine(line, analytic, g0, base.uOut, base.tol, base.precision, name, {
          subject: `H·v for a v of '${slot.name}'`,
          analyticWord: 'hessian',
          numericWord: 'differences of the gradient along v',
        });
        maxAbs = max(maxAbs, cmp.maxAbs);
        maxRel = max(maxRel, cmp.maxRel);
        if (cmp.kinkJump !== null && kink === null) kink = { slot, index: 0, value: slot.get(0), jump: cmp.kinkJump };
        if (cmp.verdict === 'mismatch' || (cmp.verdict === 'inconclusive' && verdict === 'pass')) {
          verdict = cmp.verdict;
          note = cmp.note;
        }
      } else {
        const r = hvpBySecondDifferences(h, base, c, slot, v, analytic, name);
        if (r.kink !== null && kink === null) kink = r.kink;
        maxAbs = max(maxAbs, r.maxAbs);
        maxRel = max(maxRel, r.maxRel);
        if (r.verdict === 'mismatch' || (r.verdict === 'inconclusive' && verdict === 'pass')) {
          verdict = r.verdict;
          note = r.note;
        }
      }
    }
    const shape: number[] = [];
    for (let q = 0; q < slot.shape.length; q++) shape[q] = slot.shape[q];
    params[s] = {
      name: slot.name,
      verdict,
      maxAbsError: maxAbs,
      maxRelError: maxRel,
      worst: null,
      shape,
      dtype: slot.dtype,
      method: gm !== null ? 'gradient-differences' : 'second-differences',
      elements: slot.size,
      checkedElements: slot.size,
      hints: [],
    };
    if (note) message += (message ? '; ' : '') + note;
  }
  const verdict = combinedVerdict(params);
  if (verdict !== 'mismatch' && kink !== null) return { kink, params, inputs: base.inputs };
  const outcome: CheckOutcome = { verdict, seed: ctx.seed, message, hints: [], params, calls: { forward: h.calls.forward, backward: h.calls.backward } };
  if (base.inputs !== undefined) outcome.inputs = base.inputs;
  return outcome;
}

/** (H·v)_k ≈ second difference along e_k and v, for every k, refined where it disagrees. */
function hvpBySecondDifferences(
  h: OpHarness,
  base: Baseline,
  c: Coords,
  slot: ParamSlot,
  v: Float64Array,
  analytic: Float64Array,
  name: (g: number) => string,
): { verdict: Verdict; note: string; maxAbs: number; maxRel: number; kink: KinkReport | null } {
  const t = secondStep(base.precision);
  const vMoves: Move[] = [];
  for (let i = 0; i < slot.size; i++) vMoves[i] = { slot, index: i, coef: v[i] };
  const out: { verdict: Verdict; note: string; maxAbs: number; maxRel: number; kink: KinkReport | null } = { verdict: 'pass', note: '', maxAbs: 0, maxRel: 0, kink: null };
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
