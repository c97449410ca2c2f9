// Checks a @hessian op (a forward that returns a number): the function returns the Hessian
// over the differentiated parameters taken as one vector (n×n), or with `$v` the product H·v.
// Reference: central differences of the op's @backward when that backward passes its own check
// (first differences of an exact gradient), else second differences of the forward
// (hessianSecond.ts). The message says which reference was used. The H·v form: hessianVector.ts.

import { F64, abs, formatNumber, max } from './builtins';
import { fail } from './failure';
import { GradientMap } from './gradientMap';
import { coordsOf, secondDifferenceBlock, type Coords } from './hessianSecond';
import { hvpAttempt } from './hessianVector';
import { checkUnchanged, readingResult, runAttempts, takeBaseline, unitVectors, type AttemptContext, type AttemptResult, type Baseline } from './kindBaseline';
import { kindAttemptResult, type KindParamCheck } from './kindResult';
import { checkMatrixBlock, type MatrixNaming } from './matrixCompare';
import { readMatrix } from './matrixRead';
import { OpHarness } from './opHarness';
import { elementName } from './paramSlot';
import { STREAM } from './random';
import { requireNumberOutput } from './secondDifferences';
import type { CheckSettings } from './settings';
import type { CheckOutcome, OpDescriptor } from '../model/types';

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
  if (g === undefined)
    return { gradientOp: null, note: 'reference: second differences of the forward (step u^(1/4); the op has no @backward)', calls: { forward: 0, backward: 0 } };
  const gradientOp: OpDescriptor = {
    ...op,
    kind: 'backward',
    backward: g.name,
    target: { ...op.target, backwardName: g.backwardName, backwardIsMethod: g.backwardIsMethod },
    backwardArgs: g.args,
    problems: [],
  };
  delete gradientOp.gradient;
  // The @backward's own `@gradientField` tags (the @hessian op itself carries none).
  if (g.gradientFields !== undefined) gradientOp.gradientFields = g.gradientFields;
  const outcome = runBackward(gradientOp, { ...settings, timeLimitMs: settings.timeLimitMs * REFERENCE_TIME_SHARE, stepScans: 'none' });
  if (outcome.verdict === 'pass') return { gradientOp, note: `reference: central differences of the @backward '${g.name}', which passes`, calls: outcome.calls };
  return {
    gradientOp: null,
    note: `reference: second differences of the forward (step u^(1/4)), because the @backward '${g.name}' did not pass (${outcome.verdict})`,
    calls: outcome.calls,
  };
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
  const checks: KindParamCheck[] = [];
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
    checks[s] =
      gm !== null && g0 !== null
        ? checkMatrixBlock(gm, slot, rows, g0, ws, base.uOut, base.tol, base.precision, 'gradient-differences', naming, ctx.outOfTime, base.forwardMs)
        : secondDifferenceBlock(h, base, c, s, rows, naming, ctx.outOfTime);
  }
  if (asymmetry !== '') {
    for (let s = 0; s < checks.length; s++) if (checks[s].result.verdict === 'mismatch') checks[s].result.hints[checks[s].result.hints.length] = asymmetry;
  }
  return kindAttemptResult(ctx, checks, base.inputs, '');
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
