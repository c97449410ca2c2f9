// Checks a @tangent op: the function returns the Jacobian-vector product J·t for tangents t
// ($dNAME), shaped like the forward's output. For each differentiated parameter, random
// tangents of that parameter alone are compared, output by output, with central differences of
// the forward along t; suspicious outputs get the kink test and Ridders' extrapolation before
// any blame. With several parameters, one call with every tangent at once must equal the sum.

import { F64, abs, describeValue, formatNumber, isArray, isView, max, min, isF32, isF64, newOpF32, newOpF64, newOpList } from './builtins';
import { CheckStop, fail } from './failure';
import { excessOf } from './judge';
import { findKink } from './kinkTest';
import { checkUnchanged, readingResult, runAttempts, takeBaseline, type AttemptContext, type AttemptResult, type Baseline } from './kindBaseline';
import { DirectionTally, directionKink, kindAttemptResult, type KindParamCheck } from './kindResult';
import { outputName } from './jacobianCheck';
import { centralOnLine, directionLine, type Line } from './lines';
import { OpHarness } from './opHarness';
import { flattenInto, type OutputLayout } from './outputLayout';
import { ROUNDOFF_ULPS, relativeFloorFactor, type Precision } from './precision';
import { STREAM, STREAM_STRIDE, fillSigned, substream } from './random';
import { RIDDERS_ERROR_FACTOR } from './refine';
import { RIDDERS_MIN_INITIAL_CENTRAL_STEPS, riddersAdaptive } from './ridders';
import type { CheckSettings } from './settings';
import type { BackwardArg, CheckOutcome, OpDescriptor, ParamResult } from '../model/types';

/** Most suspicious outputs refined per tangent (worst first); one confirmed is enough. */
const MAX_REFINED_OUTPUTS = 16;

export function runTangentCheck(exposed: Record<string, unknown>, op: OpDescriptor, settings: CheckSettings, seed: number, deadline: number, clock: () => number): CheckOutcome {
  const h = new OpHarness(op, exposed);
  return runAttempts(h, op, settings, seed, deadline, clock, tangentAttempt);
}

/** A value shaped like a parameter holding flat values (a number, a typed array of the same type, nested number[]), made in the op's realm. */
export function shapedLike(template: unknown, flat: ArrayLike<number>, pos: { i: number }): unknown {
  if (typeof template === 'number') return flat[pos.i++];
  if (isF64(template) || isF32(template)) {
    const out = isF32(template) ? newOpF32(template.length) : newOpF64(template.length);
    for (let i = 0; i < out.length; i++) out[i] = flat[pos.i++];
    return out;
  }
  if (isArray(template)) {
    const out = newOpList();
    for (let i = 0; i < template.length; i++) out[i] = shapedLike(template[i], flat, pos);
    return out;
  }
  return fail(`a tangent cannot be built for a parameter holding ${describeValue(template)}`);
}

/** Reads J·t shaped like the forward's output (or flat, of the output's size) into dest. */
function readTangentResult(raw: unknown, layout: OutputLayout, dest: Float64Array, what: string): void {
  try {
    flattenInto(raw, layout, dest, 0, `${what} result`);
    return;
  } catch (e) {
    if (!(e instanceof CheckStop)) throw e;
  }
  if ((isView(raw) || isArray(raw)) && (raw as ArrayLike<unknown>).length === dest.length) {
    const arr = raw as ArrayLike<unknown>;
    for (let j = 0; j < dest.length; j++) {
      const v = arr[j];
      if (typeof v !== 'number') fail(`${what} returned an array with ${describeValue(v)} at [${j}], expected numbers`);
      dest[j] = v;
    }
    return;
  }
  const expected = layout.kind === 'number' ? 'a number (the forward returns a number)' : `a value shaped like the forward's output (${layout.size} numbers)`;
  fail(`${what} returned ${describeValue(raw)}; expected J·t as ${expected}`);
}

interface TangentCall {
  analytic: Float64Array;
}

function callTangent(h: OpHarness, base: Baseline, op: OpDescriptor, tangents: (Float64Array | null)[]): TangentCall {
  const { slots, y0, layout } = base;
  const what = `tangent '${op.backward}'`;
  const placeholder = (a: BackwardArg): unknown => {
    if (a.kind !== 'tangent') return undefined;
    for (let s = 0; s < slots.length; s++) {
      if (slots[s].name === a.name) {
        const t = tangents[s];
        return shapedLike(slots[s].value(), t ?? new F64(slots[s].size), { i: 0 });
      }
    }
    return fail(`${what}: $d${a.name} names '${a.name}', which is not differentiated here (fixed, a literal, an integer or not numbers)`);
  };
  // A method's derivative may read state its forward cached, and the differences have run the
  // forward at moved points since: run it at the sample point first.
  if (h.backwardNeedsFreshForward) h.forwardInto(new F64(layout.size), true);
  const raw = h.derivativeRaw(y0, placeholder);
  checkUnchanged(h, base, what);
  const analytic = new F64(layout.size);
  readingResult(what, () => readTangentResult(raw, layout, analytic, what));
  for (let j = 0; j < analytic.length; j++) {
    const v = analytic[j];
    if (v - v !== 0) fail(`${what} result has ${v !== v ? 'NaN' : 'an infinite value'} at ${outputName(layout, j)}`);
  }
  return { analytic };
}

function tangentAttempt(ctx: AttemptContext): AttemptResult {
  const { h, op, settings } = ctx;
  const base = takeBaseline(h, op, settings, ctx.stream(STREAM.inputs), ctx.clock);
  const { slots } = base;
  const probes = max(1, settings.upstreamProbes);
  const checks: KindParamCheck[] = [];
  const sums = new F64(base.y0.length);
  const used: Float64Array[] = [];
  for (let s = 0; s < slots.length; s++) {
    const random = substream(ctx.seed, ctx.attempt * STREAM_STRIDE + STREAM.directions, s);
    checks[s] = checkSlot(ctx, base, s, probes, random, sums, used);
  }
  const result = kindAttemptResult(ctx, checks, base.inputs, '');
  if ('kink' in result || result.verdict === 'mismatch' || slots.length < 2 || used.length !== slots.length) return result;
  // Linearity: with every tangent at once, J·t is the sum of the per-parameter products.
  const together = callTangent(h, base, op, used).analytic;
  result.calls = { forward: h.calls.forward, backward: h.calls.backward };
  for (let j = 0; j < together.length; j++) {
    if (abs(together[j] - sums[j]) > base.tol * max(abs(together[j]), abs(sums[j]), 1e-300) + ROUNDOFF_ULPS * 2 ** -52 * (abs(sums[j]) + abs(together[j]))) {
      result.verdict = 'mismatch';
      result.message = `with every tangent at once, ${outputName(base.layout, j)} is ${formatNumber(together[j])}, but the per-parameter products add up to ${formatNumber(sums[j])}: the tangent is not linear in its tangents`;
      result.hints[result.hints.length] =
        "each parameter alone agrees with finite differences; look for a product of two tangents or a term that depends on another parameter's tangent";
      break;
    }
  }
  return result;
}

/** What comparing a derivative along one line found. */
export interface LineComparison {
  verdict: ParamResult['verdict'];
  note: string;
  /** Slope gap of a kink met along the line, or null. */
  kinkJump: number | null;
  maxAbs: number;
  maxRel: number;
  /** Whether the analytic side was zero in every entry. */
  allZero: boolean;
}

/**
 * Compares `analytic` (the derivative along the line of the map the line evaluates, one value per output of f) with
 * a central difference along the line (Nocedal & Wright §8.1); suspicious outputs, worst first,
 * get the kink test and Ridders' extrapolation (Numerical Recipes §5.7) before any is blamed.
 * `what(j)` names output j, `subject` the product compared (for the note).
 */
export function compareAlongLine(
  line: Line,
  analytic: Float64Array,
  y0: Float64Array,
  uOut: number,
  tol: number,
  precision: Precision,
  what: (j: number) => string,
  words: { subject: string; analyticWord: string; numericWord: string },
): LineComparison {
  const m = y0.length;
  const plus = new F64(m);
  const minus = new F64(m);
  const out: LineComparison = { verdict: 'pass', note: '', kinkJump: null, maxAbs: 0, maxRel: 0, allZero: true };
  const t = line.centralStep;
  const sp = line.evalAt(t, plus);
  const sm = line.evalAt(-t, minus);
  if (sp !== sp || sm !== sm) fail(`output is not finite after moving '${line.slot.name}' by a relative step of ${formatNumber(t, 3)} along a random direction`);
  const numeric = new F64(m);
  const bound = new F64(m);
  let largest = 0;
  for (let j = 0; j < m; j++) {
    numeric[j] = (plus[j] - minus[j]) / (sp - sm);
    bound[j] = plus[j] === minus[j] ? 0 : (ROUNDOFF_ULPS * uOut * (abs(plus[j]) + abs(minus[j]))) / (sp - sm);
    largest = max(largest, abs(numeric[j]), abs(analytic[j]));
  }
  const floor = relativeFloorFactor(precision) * largest;
  const order: number[] = [];
  for (let j = 0; j < m; j++) if (excessOf(analytic[j], numeric[j], bound[j], tol, floor) > 0) order[order.length] = j;
  // Worst first (a plain selection sort: no Array.prototype methods in the engine).
  for (let a = 0; a < order.length; a++) {
    for (let b = a + 1; b < order.length; b++) {
      if (abs(analytic[order[b]] - numeric[order[b]]) > abs(analytic[order[a]] - numeric[order[a]])) {
        const x = order[a];
        order[a] = order[b];
        order[b] = x;
      }
    }
  }
  const count = min(order.length, MAX_REFINED_OUTPUTS);
  if (count > 0) {
    const ws: Float64Array[] = [];
    const floors = new F64(count);
    const discrepancy = new F64(count);
    for (let q = 0; q < count; q++) {
      const w = new F64(m);
      w[order[q]] = 1;
      ws[q] = w;
      floors[q] = floor;
      discrepancy[q] = abs(analytic[order[q]] - numeric[order[q]]);
    }
    const scan = findKink(line, y0, ws, uOut, tol, floors, discrepancy);
    if (scan.kink !== null) {
      out.verdict = 'inconclusive';
      out.kinkJump = scan.kink.jump;
      return out;
    }
    const r = riddersAdaptive(
      (step) => centralOnLine(line, ws, step, plus, minus),
      min(line.refineStep, scan.smoothBelow),
      RIDDERS_MIN_INITIAL_CENTRAL_STEPS * line.centralStep,
      count,
      (n, e, q) => e <= tol * max(abs(analytic[order[q]]), abs(n), floor),
    );
    for (let q = 0; q < count; q++) {
      const j = order[q];
      const resolution = (ROUNDOFF_ULPS * uOut * abs(y0[j])) / r.initialStep[q];
      const e = max(r.error[q], resolution);
      numeric[j] = r.value[q];
      bound[j] = e < Infinity ? RIDDERS_ERROR_FACTOR * e : bound[j];
      const scale = max(abs(analytic[j]), abs(r.value[q]), floor);
      if (excessOf(analytic[j], r.value[q], RIDDERS_ERROR_FACTOR * e, tol, floor) > 0 && e < Infinity) {
        if (out.verdict !== 'mismatch') {
          out.verdict = 'mismatch';
          out.note = `${words.subject} disagrees at ${what(j)}: ${words.analyticWord} gives ${formatNumber(analytic[j])}, ${words.numericWord} ${formatNumber(r.value[q])} (relative error ${formatNumber(abs(analytic[j] - r.value[q]) / scale, 3)})`;
        }
      } else if (!(e <= tol * scale) && out.verdict === 'pass') {
        out.verdict = 'inconclusive';
        out.note = `the finite-difference estimate of ${words.subject} at ${what(j)} is unreliable (error ${formatNumber(e, 3)} against a value of ${formatNumber(r.value[q], 6)})`;
      }
    }
    if (order.length > count && out.verdict === 'pass') {
      // Suspicious outputs beyond the refined ones were never judged: no pass (and no detection
      // floor) can rest on them.
      const left = order.length - count;
      out.verdict = 'inconclusive';
      out.note = `${words.subject}: ${left} suspicious output${left === 1 ? '' : 's'} could not be refined within the limits (${count} were, and agree)`;
    }
  }
  for (let j = 0; j < m; j++) {
    const gap = abs(analytic[j] - numeric[j]);
    out.maxAbs = max(out.maxAbs, gap);
    if (gap > 0) out.maxRel = max(out.maxRel, gap / max(abs(analytic[j]), abs(numeric[j]), floor, tol > 0 ? bound[j] / tol : 0));
    if (analytic[j] !== 0) out.allZero = false;
  }
  return out;
}

/** Random tangents of one parameter (the others zero), each compared output by output. */
function checkSlot(ctx: AttemptContext, base: Baseline, s: number, probes: number, random: () => number, sums: Float64Array, used: Float64Array[]): KindParamCheck {
  const { h, op } = ctx;
  const { slots, y0, uOut, tol, layout } = base;
  const slot = slots[s];
  const m = y0.length;
  const tally = new DirectionTally();
  for (let p = 0; p < probes && !tally.mismatched; p++) {
    const d = fillSigned(random, new F64(slot.size));
    const line = directionLine(h, slot, d);
    const tangents: (Float64Array | null)[] = [];
    for (let q = 0; q < slots.length; q++) tangents[q] = q === s ? line.scaled : null;
    const { analytic } = callTangent(h, base, op, tangents);
    if (p === 0) {
      used[s] = line.scaled;
      for (let j = 0; j < m; j++) sums[j] += analytic[j];
    }
    const c = compareAlongLine(line, analytic, y0, uOut, tol, base.precision, (j) => outputName(layout, j), {
      subject: `J·t for a tangent of '${slot.name}'`,
      analyticWord: 'tangent',
      numericWord: 'finite differences along the tangent',
    });
    tally.add({ verdict: c.verdict, note: c.note, maxAbs: c.maxAbs, maxRel: c.maxRel, kink: directionKink(slot, c.kinkJump) });
    if (c.verdict === 'mismatch' && c.allZero) {
      tally.hints[tally.hints.length] = `the tangent gives 0 for every output when only $d${slot.name} is non-zero: the term of '${slot.name}' looks missing`;
    }
  }
  return tally.finish(slot, 'directional', tol);
}
