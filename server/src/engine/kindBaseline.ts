// What every derivative kind (@jacobian, @tangent, @hessian) does before it compares anything:
// draw the inputs, call the forward at the sample point twice (shape, finiteness,
// determinism, input mutation), choose precision and tolerance; and the attempt loop that
// redraws the inputs after a kink, as runCheck does for @backward ops.

import { F64, abs, describeThrown, formatNumber, max, min } from './builtins';
import { CheckStop, EngineFault, fail, giveUp } from './failure';
import type { InputGuard } from './inputGuard';
import type { OpHarness } from './opHarness';
import { elementName, type ParamSlot } from './paramSlot';
import { describeOutputIndex, layoutPrecision, type OutputLayout } from './outputLayout';
import { unitRoundoff, type Precision } from './precision';
import { STREAM_STRIDE, substream, type RandomSource } from './random';
import type { KinkReport } from './refine';
import { captureInputs, finiteOnly } from './reportData';
import { bundleFramesOf } from './thrownPlace';
import type { CheckSettings } from './settings';
import type { CheckOutcome, OpDescriptor, ParamResult, Verdict } from '../model/types';

/** The sample point of one attempt and what was learnt there. */
export interface Baseline {
  slots: ParamSlot[];
  y0: Float64Array;
  layout: OutputLayout;
  guard: InputGuard;
  precision: Precision;
  uOut: number;
  tol: number;
  inputs: CheckOutcome['inputs'];
  /** Time of one forward call, in milliseconds. */
  forwardMs: number;
}

/** Draws the inputs of one attempt and runs the forward's baseline calls. */
export function takeBaseline(h: OpHarness, op: OpDescriptor, settings: CheckSettings, rng: RandomSource, clock: () => number): Baseline {
  const sample = h.prepare(rng, settings.maxElements);
  const inputs = captureInputs(sample);
  // Kept on the harness so a check stopped later (an exception) still reports what reproduces it.
  h.capturedInputs = inputs;
  const slots = sample.slots;
  if (slots.length === 0) fail('no parameter is differentiated: every input is fixed, a literal, an integer or not numbers');
  const guard = h.guardInputs();
  const t0 = clock();
  const y0 = h.forwardInto(null, true);
  const changed = guard.firstChange(h.inputValues());
  if (changed !== null) fail(`forward changed its input ${changed}`);
  const layout = h.outputLayout;
  if (layout.size > settings.maxElements) fail(`forward output has ${layout.size} elements, more than the limit of ${settings.maxElements}`);
  const t1 = clock();
  const y1 = h.forwardInto(null, true);
  const forwardMs = max(0, min(clock() - t1, t1 - t0));
  for (let j = 0; j < y0.length; j++) {
    if (y0[j] !== y1[j]) {
      giveUp(`forward is not deterministic: two calls at the same input differ at ${describeOutputIndex(layout, j)} (${formatNumber(y0[j], 17)} then ${formatNumber(y1[j], 17)})`);
    }
  }
  // Precision: the outputs' roundoff comes from the outputs' declared type (a Float32Array is
  // float32; a float32 parameter summed into a plain number gives float64 outputs), a
  // parameter's from the parameter. The tolerance is float32's when either is float32. An op
  // sampled float64 whose forward rounds to float32 inside is held to float64's tolerance, and
  // the precision hint (hints.ts) tells its author why it cannot meet it.
  const precision: Precision = layoutPrecision(layout);
  let anyF32 = precision === 'f32';
  for (let s = 0; s < slots.length; s++) if (slots[s].precision === 'f32') anyF32 = true;
  const tol = typeof op.tolerance === 'number' && op.tolerance > 0 ? op.tolerance : anyF32 ? settings.toleranceF32 : settings.toleranceF64;
  h.appliedTolerance = tol;
  return { slots, y0, layout, guard, precision, uOut: unitRoundoff(precision), tol, inputs, forwardMs };
}

/** Fails when the derivative function changed an input (it must only read them). */
export function checkUnchanged(h: OpHarness, base: Baseline, what: string): void {
  const changed = base.guard.firstChange(h.inputValues());
  if (changed !== null) fail(`${what} changed its input ${changed}`);
}

/**
 * Runs a reader over what a derivative function returned: a getter or proxy of user code that
 * throws while being read is the function's fault, named as such, not an engine failure.
 */
export function readingResult<T>(what: string, read: () => T): T {
  try {
    return read();
  } catch (e) {
    if (e instanceof CheckStop) throw e;
    return fail(`reading what ${what} returned threw ${describeThrown(e)}`);
  }
}

/** The m unit vectors of the output space: comparing with them reads a matrix entry by entry. */
export function unitVectors(m: number): Float64Array[] {
  const ws: Float64Array[] = [];
  for (let k = 0; k < m; k++) {
    const w = new F64(m);
    w[k] = 1;
    ws[k] = w;
  }
  return ws;
}

/** What one attempt ends with: an outcome, or a kink that asks for a redraw. */
export type AttemptResult = CheckOutcome | { kink: KinkReport; params: ParamResult[]; inputs: CheckOutcome['inputs'] };

export interface AttemptContext {
  h: OpHarness;
  op: OpDescriptor;
  settings: CheckSettings;
  seed: number;
  attempt: number;
  /** A random stream of this attempt for a purpose (see STREAM). */
  stream: (purpose: number) => RandomSource;
  outOfTime: () => boolean;
  clock: () => number;
}

/** An outcome with no parameter results (a check that stopped before comparing anything). */
export function emptyOutcome(verdict: Verdict, seed: number, message: string, calls: { forward: number; backward: number }): CheckOutcome {
  return { verdict, seed, message, hints: [], params: [], calls: { forward: calls.forward, backward: calls.backward } };
}

/**
 * Share of settings.timeLimitMs after the engine's deadline (check.ts, TIME_BUDGET_SHARE 0.8)
 * when no further call of the op starts (OpHarness.stopAfter): half the slack before the
 * sandbox's watchdog, so a call that starts just before it still ends before the watchdog when
 * it takes less than a tenth of the limit (our choice).
 */
const HARD_STOP_SHARE = 0.1;

/**
 * Runs attempts until one ends without a kink (at most settings.kinkResamples redraws): a kink is
 * never a mismatch. The one redraw loop of every op kind (runCheck's backward check included).
 * Never throws.
 */
export function runAttempts(
  h: OpHarness,
  op: OpDescriptor,
  settings: CheckSettings,
  seed: number,
  deadline: number,
  clock: () => number,
  attemptFn: (ctx: AttemptContext) => AttemptResult,
): CheckOutcome {
  const outOfTime = (): boolean => clock() > deadline;
  // Phases stop themselves at the deadline; past HARD_STOP_SHARE of the limit no call starts.
  h.stopAfter(clock, deadline + HARD_STOP_SHARE * settings.timeLimitMs, settings.timeLimitMs);
  const kinks: KinkReport[] = [];
  let lastParams: ParamResult[] = [];
  let lastInputs: CheckOutcome['inputs'];
  try {
    for (let attempt = 0; attempt <= settings.kinkResamples; attempt++) {
      const stream = (purpose: number): RandomSource => substream(seed, attempt * STREAM_STRIDE + purpose);
      const result = attemptFn({ h, op, settings, seed, attempt, stream, outOfTime, clock });
      if ('kink' in result) {
        kinks[kinks.length] = result.kink;
        lastParams = result.params;
        lastInputs = result.inputs;
        continue;
      }
      if (attempt > 0) {
        const first = kinks[0];
        const note = `redrawn ${attempt}× after a non-differentiable point near ${elementName(first.slot, first.index)} = ${formatNumber(first.value)}`;
        result.message = result.message ? `${result.message}; ${note}` : note;
      }
      return finiteOnly(withTolerance(result, h));
    }
    const last = kinks[kinks.length - 1];
    const outcome = emptyOutcome(
      'inconclusive',
      seed,
      `non-differentiable point near ${elementName(last.slot, last.index)} = ${formatNumber(last.value)}${last.jump !== 0 ? ` (slopes on either side differ by ${formatNumber(abs(last.jump), 3)})` : ''}; ${settings.kinkResamples} redraw${settings.kinkResamples === 1 ? '' : 's'} met a kink too — add \`avoid\` points to the @sample`,
      h.calls,
    );
    // The figures of the last draw, so the report can still show what was compared.
    outcome.params = lastParams;
    if (lastInputs !== undefined) outcome.inputs = lastInputs;
    return finiteOnly(withTolerance(outcome, h));
  } catch (e) {
    if (e instanceof CheckStop) return finiteOnly(stoppedOutcome(e, seed, settings.timeLimitMs, h));
    return finiteOnly(internalErrorOutcome(e, seed, h.calls));
  }
}

/**
 * Stamps the tolerance the check judged with on every parameter result that has none, so a
 * reader (the report page, the regression-test snippet) never recomputes it by another rule.
 */
function withTolerance(outcome: CheckOutcome, h: OpHarness): CheckOutcome {
  const tol = h.appliedTolerance;
  if (tol === undefined) return outcome;
  for (let s = 0; s < outcome.params.length; s++) if (outcome.params[s].tolerance === undefined) outcome.params[s].tolerance = tol;
  return outcome;
}

/** The outcome of a bug in the engine itself (never the op's fault). */
export function internalErrorOutcome(e: unknown, seed: number, calls: { forward: number; backward: number }): CheckOutcome {
  const outcome = emptyOutcome('error', seed, `internal error in the check engine: ${describeThrown(e)}`, calls);
  outcome.failure = 'internal';
  return outcome;
}

/**
 * The outcome of a check a CheckStop ended: its verdict and message, how far the time limit let
 * it get, the inputs of the attempt that stopped and the frames of a thrown error (so an
 * exception reproduces like a mismatch and is reported at the user's line).
 */
export function stoppedOutcome(e: CheckStop, seed: number, timeLimitMs: number, h: OpHarness | null): CheckOutcome {
  const stopped = emptyOutcome(e.verdict, seed, e.message, h !== null ? h.calls : { forward: 0, backward: 0 });
  // The op's own code threw, or the op cannot be checked as written (the message says which part).
  if (e.verdict === 'error') stopped.failure = e instanceof EngineFault ? 'internal' : e.thrown !== undefined ? 'threw' : 'refused';
  if (e.timeLimit !== undefined) stopped.stoppedAtTimeLimit = { ...e.timeLimit, timeLimitMs };
  if (h !== null && h.capturedInputs !== undefined) stopped.inputs = h.capturedInputs;
  if (e.thrown !== undefined) {
    const frames = bundleFramesOf(e.thrown);
    if (frames !== '') stopped.thrownFrames = frames;
  }
  return stopped;
}

/** The verdict of several parameter results: any mismatch, else any inconclusive, else pass. */
export function combinedVerdict(params: ParamResult[]): Verdict {
  let v: Verdict = 'pass';
  for (let s = 0; s < params.length; s++) {
    if (params[s].verdict === 'mismatch') return 'mismatch';
    if (params[s].verdict === 'inconclusive' || params[s].verdict === 'error') v = 'inconclusive';
  }
  return v;
}
