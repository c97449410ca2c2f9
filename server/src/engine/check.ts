// runCheck: one op's whole gradient check — draw inputs, call the forward and the backward,
// estimate every differentiated parameter's gradient numerically (full, grouped or
// dot-product), refine suspicious elements, redraw after kinks, and assemble the verdict.

import { F64, I32, abs, formatNumber, max } from './builtins';
import { CheckStop, fail } from './failure';
import { GROUPED_WIDENINGS, PROBE_SWITCH_CALLS, chooseMethod, widened, type Structure } from './methodChoice';
import { dotProductProbes, type DotProbeResult } from './dotProductCheck';
import { estimateColumns } from './fullCheck';
import { estimateGrouped } from './groupedCheck';
import { float32OutputHint, paramHints, swapHints, type ParamEvidence } from './hints';
import { internalErrorOutcome, runAttempts, stoppedOutcome, takeBaseline } from './kindBaseline';
import { blameOutput } from './outputBlame';
import { ElementState, compareElements, floorsFor, type Comparison, type ElementEstimates } from './judge';
import { elementLine } from './lines';
import type { InstanceSnapshot } from './instanceState';
import { elementName, unravelSlot, OpHarness } from './opHarness';
import type { ParamSlot } from './paramSlot';
import { relativeFloorFactor, unitRoundoff, type Precision } from './precision';
import { STREAM, STREAM_STRIDE, fillSigned, substream, type RandomSource } from './random';
import { refineSuspicious, type KinkReport, type RefineSummary } from './refine';
import { ROOT_PROBES, describeSearch, splitSearch } from './splitSearch';
import { ERROR_MAP_MAX_ELEMENTS, finiteOnly, stepScan } from './reportData';
import { DEFAULT_SETTINGS, type CheckSettings } from './settings';
import type { CheckMethod, CheckOutcome, OpDescriptor, ParamResult, TimeLimitStop, Verdict } from '../model/types';
import { runDerivativeKind } from './kindCheck';

export interface OpCheckRequest {
  op: OpDescriptor;
  settings: CheckSettings;
}

/**
 * Share of settings.timeLimitMs the engine spends before it stops refining and reports what it
 * has: the rest is left for the sandbox (bundle, context, serialisation) so its watchdog does
 * not have to kill the check.
 */
const TIME_BUDGET_SHARE = 0.8;

/**
 * Most time, in milliseconds, a step scan may cost (26 forward calls, estimated from the timed
 * baseline calls); above it the report goes without the scan. Our choice: the scan is a picture,
 * not a verdict, and should not double the check of a large op.
 */
const STEP_SCAN_BUDGET_MS = 150;

interface ParamCheck {
  result: ParamResult;
  evidence: ParamEvidence | null;
  kink: KinkReport | null;
  note: string;
  /** Position (in the estimates) of the worst element, -1 when none was compared. */
  worstPos: number;
  /** Set when the time limit left suspicious elements of this parameter unrefined. */
  timeStop?: Omit<TimeLimitStop, 'timeLimitMs'>;
}

interface Attempt {
  h: OpHarness;
  op: OpDescriptor;
  settings: CheckSettings;
  slots: ParamSlot[];
  y0: Float64Array;
  /** Upstream vectors of the full/grouped checks (K of them). */
  ws: Float64Array[];
  /** analytic[s][k]: gradient of slot s for upstream vector k. */
  analytic: Float64Array[][];
  /** Upstream vectors and gradients of the dot-product probes. */
  dotUs: Float64Array[];
  dotGrads: Float64Array[][];
  uOut: number;
  tol: number;
  precision: Precision;
  outOfTime: () => boolean;
  seed: number;
  attempt: number;
  structures: (Structure | null)[];
  methods: CheckMethod[];
  /** Time of one forward call at the sample point, in milliseconds (from the two baseline calls). */
  forwardMs: number;
}

function emptyOutcome(verdict: Verdict, seed: number, message: string, calls: { forward: number; backward: number }): CheckOutcome {
  return { verdict, seed, message, hints: [], params: [], calls: { forward: calls.forward, backward: calls.backward } };
}

/** Checks one op. Never throws: every failure is a verdict with a message. */
export function runCheck(exposed: Record<string, unknown>, request: OpCheckRequest, clock: () => number): CheckOutcome {
  let seed = 0;
  let calls = { forward: 0, backward: 0 };
  let timeLimitMs = DEFAULT_SETTINGS.timeLimitMs;
  let harness: OpHarness | null = null;
  try {
    const op = request.op;
    const settings: CheckSettings = { ...DEFAULT_SETTINGS, ...(request.settings ?? {}) };
    seed = typeof op.seed === 'number' ? op.seed : settings.seed;
    timeLimitMs = settings.timeLimitMs;
    if (op.problems && op.problems.length > 0) return { ...emptyOutcome('error', seed, op.problems[0].message, calls), failure: 'annotation' };
    const start = clock();
    const deadline = start + TIME_BUDGET_SHARE * settings.timeLimitMs;
    if (op.kind !== undefined && op.kind !== 'backward') {
      return runDerivativeKind(exposed, op, settings, seed, deadline, clock, (o, st) => runCheck(exposed, { op: o, settings: st }, clock));
    }
    const h = new OpHarness(op, exposed);
    harness = h;
    calls = h.calls;
    const outcome = runAttempts(h, op, settings, seed, deadline, clock, (ctx) => runAttempt(ctx.h, ctx.op, ctx.settings, ctx.seed, ctx.attempt, ctx.outOfTime, ctx.clock));
    if (op.target.libraryGradient && outcome.verdict !== 'error') outcome.gradientSource = 'library';
    return outcome;
  } catch (e) {
    if (e instanceof CheckStop) return finiteOnly(stoppedOutcome(e, seed, timeLimitMs, harness));
    return finiteOnly(internalErrorOutcome(e, seed, calls));
  }
}

function runAttempt(
  h: OpHarness,
  op: OpDescriptor,
  settings: CheckSettings,
  seed: number,
  attempt: number,
  outOfTime: () => boolean,
  clock: () => number,
): CheckOutcome | { kink: KinkReport; params: ParamResult[]; inputs: CheckOutcome['inputs'] } {
  const stream = (purpose: number) => substream(seed, attempt * STREAM_STRIDE + purpose);
  // Baseline: inputs, output at the sample point, input mutation, determinism, precision and
  // tolerance — the same for every op kind (kindBaseline.ts).
  const base = takeBaseline(h, op, settings, stream(STREAM.inputs), clock);
  const { inputs, slots, y0, layout, guard, precision, uOut, tol, forwardMs } = base;
  if (!h.takesUpstream && layout.kind !== 'number') {
    fail(`the backward takes no $dy, so the forward must return a number; it returned ${layout.size} values`);
  }

  // Upstream vectors: uniform in [-1, 1] (K of them), or the plain gradient when there is no $dy.
  const m = y0.length;
  const K = h.takesUpstream ? max(1, settings.upstreamProbes) : 1;
  const upstreamRandom = stream(STREAM.upstream);
  const ws: Float64Array[] = [];
  for (let k = 0; k < K; k++) {
    const w = new F64(m);
    if (h.takesUpstream) fillSigned(upstreamRandom, w);
    else for (let j = 0; j < m; j++) w[j] = 1;
    ws[k] = w;
  }

  // Structure of each parameter's Jacobian (forward calls only), then the method.
  const structures: (Structure | null)[] = [];
  const methods: CheckMethod[] = [];
  const structureRandom = stream(STREAM.structure);
  for (let s = 0; s < slots.length; s++) {
    const choice = chooseMethod(h, slots[s], y0, settings, structureRandom);
    structures[s] = choice.structure;
    methods[s] = choice.method;
  }

  // Backward calls: K upstream probes, plus the dot-product probes when a parameter needs them.
  const analytic: Float64Array[][] = [];
  for (let s = 0; s < slots.length; s++) analytic[s] = [];
  const dotUs: Float64Array[] = [];
  const dotGrads: Float64Array[][] = [];
  for (let s = 0; s < slots.length; s++) dotGrads[s] = [];
  let needsDot = false;
  for (let s = 0; s < slots.length; s++) if (methods[s] === 'dot-product') needsDot = true;
  const P = needsDot ? max(1, settings.dotProductProbes) : 0;
  for (let p = 0; p < P; p++) {
    const u = new F64(m);
    if (h.takesUpstream) fillSigned(upstreamRandom, u);
    else for (let j = 0; j < m; j++) u[j] = 1;
    dotUs[p] = u;
  }
  const scratch = new F64(m);
  let instanceState: InstanceSnapshot | null = null;
  const callBackward = (w: Float64Array, into: Float64Array[]): void => {
    // A method's backward may read state its forward cached, and the structure probes have run
    // the forward at moved points since: run it at the sample point once, keep the instance as
    // it left it, and put that state back after every backward call (a layer's backward may
    // accumulate into its fields: `this.gradW[k] += ...`).
    if (h.renewsInstance) {
      // State in `#private` fields cannot be snapshot: a fresh instance and forward per call.
      h.prepareFreshInstanceForBackward(scratch);
    } else if (h.backwardNeedsFreshForward && instanceState === null) {
      h.forwardInto(scratch, true);
      instanceState = h.snapshotInstance();
    } else if (instanceState !== null) {
      // Forward calls at moved points may have run since (a late call, e.g. for output hints).
      instanceState.restore();
    }
    h.backwardInto(h.takesUpstream ? w : null, y0, slots, into);
    const changed = guard.firstChange(h.inputValues());
    if (changed !== null) fail(`backward changed its input ${changed}`);
    if (instanceState !== null) instanceState.restore();
  };
  for (let k = 0; k < K; k++) {
    const into: Float64Array[] = [];
    for (let s = 0; s < slots.length; s++) into[s] = new F64(slots[s].size);
    callBackward(ws[k], into);
    for (let s = 0; s < slots.length; s++) analytic[s][k] = into[s];
  }
  for (let p = 0; p < P; p++) {
    const into: Float64Array[] = [];
    for (let s = 0; s < slots.length; s++) into[s] = new F64(slots[s].size);
    if (h.takesUpstream) callBackward(dotUs[p], into);
    else for (let s = 0; s < slots.length; s++) into[s] = analytic[s][0];
    for (let s = 0; s < slots.length; s++) dotGrads[s][p] = into[s];
  }

  const at: Attempt = {
    h, op, settings, slots, y0, ws, analytic, dotUs, dotGrads, uOut, tol, precision, outOfTime, seed, attempt, structures, methods, forwardMs,
  };
  const checks: ParamCheck[] = [];
  for (let s = 0; s < slots.length; s++) checks[s] = checkParam(at, s);

  let anyMismatch = false;
  let anyInconclusive = false;
  let kink: KinkReport | null = null;
  for (let s = 0; s < checks.length; s++) {
    if (checks[s].result.verdict === 'mismatch') anyMismatch = true;
    if (checks[s].result.verdict === 'inconclusive') anyInconclusive = true;
    if (checks[s].kink !== null && kink === null) kink = checks[s].kink;
  }
  if (!anyMismatch && kink !== null) {
    const params: ParamResult[] = [];
    for (let s = 0; s < checks.length; s++) {
      params[s] = checks[s].result;
      if (checks[s].kink !== null) params[s].verdict = 'inconclusive';
    }
    return { kink, params, inputs };
  }

  // Hints, step scans and error maps for the report.
  const evidence: ParamEvidence[] = [];
  for (let s = 0; s < checks.length; s++) {
    const c = checks[s];
    if (c.evidence === null) continue;
    if (c.result.verdict === 'mismatch') c.result.hints = paramHints(c.evidence, slots);
    evidence[evidence.length] = c.evidence;
  }
  // Plain loops, not Array.prototype methods: the op's module may have replaced those.
  const mismatched: ParamEvidence[] = [];
  for (let s = 0; s < checks.length; s++) {
    const e = checks[s].evidence;
    if (e !== null && checks[s].result.verdict === 'mismatch') mismatched[mismatched.length] = e;
  }
  const opHints = anyMismatch ? swapHints(mismatched) : [];
  // Several named outputs: say which one's term is wrong, when one output accounts for it.
  if (anyMismatch && layout.kind === 'object' && !outOfTime()) {
    const gradientsFor = (w: Float64Array): Float64Array[] => {
      const into: Float64Array[] = [];
      for (let s = 0; s < slots.length; s++) into[s] = new F64(slots[s].size);
      callBackward(w, into);
      return into;
    };
    for (let s = 0; s < checks.length; s++) {
      const c = checks[s];
      if (c.result.verdict !== 'mismatch' || c.evidence === null || c.worstPos < 0) continue;
      const blame = blameOutput(h, layout, slots[s], s, c.evidence.est.indices[c.worstPos], ws[c.evidence.cmp.worstProbe[c.worstPos]], tol, gradientsFor);
      if (blame !== null) {
        c.result.hints[c.result.hints.length] = blame;
        c.note += ` — ${blame}`;
      }
    }
  }
  for (let s = 0; s < checks.length; s++) addReportData(at, s, checks[s]);

  const verdict: Verdict = anyMismatch ? 'mismatch' : anyInconclusive ? 'inconclusive' : 'pass';
  if (verdict !== 'pass' && precision === 'f64') {
    // The check ran at float64 precision, yet the op may compute in float32: name the precision.
    const f32 = float32OutputHint(y0);
    if (f32 !== null) opHints[opHints.length] = f32;
  }
  let message = '';
  const params: ParamResult[] = [];
  for (let s = 0; s < checks.length; s++) {
    const note = checks[s].note;
    if (note) message += (message ? '; ' : '') + note;
    params[s] = checks[s].result;
  }
  const outcome: CheckOutcome = {
    verdict,
    seed,
    message,
    hints: opHints,
    params,
    calls: { forward: h.calls.forward, backward: h.calls.backward },
  };
  if (inputs !== undefined) outcome.inputs = inputs;
  for (let s = 0; s < checks.length; s++) {
    const stop = checks[s].timeStop;
    if (stop !== undefined && outcome.stoppedAtTimeLimit === undefined) outcome.stoppedAtTimeLimit = { ...stop, timeLimitMs: settings.timeLimitMs };
  }
  return outcome;
}

/** Numeric estimates, comparison and refinement of one parameter. */
function checkParam(at: Attempt, s: number): ParamCheck {
  const slot = at.slots[s];
  const analytic = at.analytic[s];
  const n = slot.size;
  let est: ElementEstimates | null = null;
  const dot: DotProbeResult[] = [];
  const complete = true;
  let method = at.methods[s];
  if (method === 'grouped') {
    // An output moved outside the hypothesised bands: widen them, and after GROUPED_WIDENINGS
    // use a general method. A wrong structure guess costs calls, never a verdict.
    let st: Structure | null = at.structures[s];
    for (let widening = 0; st !== null && est === null; widening++) {
      est = estimateGrouped(at.h, slot, st, at.ws, at.uOut, at.outOfTime);
      st = est === null && widening < GROUPED_WIDENINGS ? widened(st) : null;
    }
    if (est === null) method = n > at.settings.largeParamElements || 2 * n > PROBE_SWITCH_CALLS ? 'dot-product' : 'full';
  }
  // Each parameter draws its directions and its subset from streams of its own.
  const dirRandom = substream(at.seed, at.attempt * STREAM_STRIDE + STREAM.directions, s);
  if (est !== null) {
    // Grouped estimates rest on the structure guess: a coupling the probes did not see would be
    // credited to the wrong element, or lost, and a backward that misses the same coupling would
    // agree with them. One dot-product probe along a random direction (2 forward calls, reusing
    // the first upstream probe's backward) looks at the whole parameter. It cannot tell a missed
    // coupling from a kink met along the direction (a subgradient is not linear in the
    // direction), so its failure is never a verdict by itself: the parameter is checked again
    // column by column, or, when that costs more than probing, by probes split down to elements.
    const safety = dotProductProbes(at.h, slot, [at.ws[0]], [analytic[0]], at.y0, at.uOut, at.tol, dirRandom);
    if (safety[0].state === 'mismatch' || safety[0].state === 'uncertain') {
      // Checked again without the structure: column by column, or by probes and splitting.
      est = null;
      method = n > at.settings.largeParamElements || 2 * n > PROBE_SWITCH_CALLS ? 'dot-product' : 'full';
    }
  }
  if (est !== null) {
    // grouped estimates stand
  } else if (method === 'dot-product') {
    return probeParam(at, s, dirRandom);
  } else {
    const all = new I32(n);
    for (let i = 0; i < n; i++) all[i] = i;
    est = estimateColumns(at.h, slot, all, at.ws, at.uOut, at.outOfTime);
  }
  const floors = floorsFor(analytic, est, relativeFloorFactor(floorPrecisionOf(at, slot)));
  const cmp = compareElements(analytic, est, at.tol, floors);
  const refine = refineSuspicious(at.h, slot, analytic, est, cmp, at.ws, at.y0, at.uOut, at.tol, at.outOfTime, method === 'grouped');
  const result = summarise(at, s, method, analytic, est, cmp, refine, dot, complete);
  // Every element compared against the tolerance: the smallest error caught is the tolerance itself.
  result.result.detectionFloor = at.tol;
  return result;
}

/** The precision behind the zero level of a parameter's gradient: float32 when it or the output is. */
function floorPrecisionOf(at: Attempt, slot: ParamSlot): Precision {
  return slot.precision === 'f32' || at.precision === 'f32' ? 'f32' : 'f64';
}

/**
 * A parameter whose exact grouping costs more forward calls than probing: dot-product probes
 * judged against their own error, split down to single elements (splitSearch.ts). Only single
 * elements, compared against the tolerance with their refined estimates, make a verdict.
 */
function probeParam(at: Attempt, s: number, random: RandomSource): ParamCheck {
  const slot = at.slots[s];
  // The probes' own upstream vectors when the method was chosen up front; the K upstream
  // vectors when grouping was given up on the way.
  const us = at.dotUs.length > 0 ? at.dotUs : at.ws;
  const grads = at.dotUs.length > 0 ? at.dotGrads[s] : at.analytic[s];
  const factor = relativeFloorFactor(floorPrecisionOf(at, slot));
  const floorLevel = new F64(grads.length);
  for (let p = 0; p < grads.length; p++) {
    let g = 0;
    const a = grads[p];
    for (let i = 0; i < a.length; i++) g = max(g, abs(a[i]));
    floorLevel[p] = factor * g;
  }
  const uGrad = unitRoundoff(floorPrecisionOf(at, slot));
  const search = splitSearch(
    { h: at.h, slot, y0: at.y0, uOut: at.uOut, uGrad, tol: at.tol, floorOf: (p) => floorLevel[p], outOfTime: at.outOfTime },
    us,
    grads,
    random,
  );
  const refine: RefineSummary = {
    confirmed: search.mismatchPos >= 0 ? 1 : 0,
    uncertain: search.uncertain,
    unrefined: 0,
    kink: search.kink,
    uncertainNote: search.uncertainNote,
  };
  const result = summarise(at, s, 'dot-product', grads, search.est, search.cmp, refine, [], false);
  const r = result.result;
  // Infinite when the root probes could not all run (time): no floor to state.
  if (search.detectionFloor < Infinity) r.detectionFloor = search.detectionFloor;
  // The probes' worst relative discrepancy (against their threshold's scale) joins the figures.
  for (let q = 0; q < search.rootProbes.length; q++) {
    const rp = search.rootProbes[q];
    const scale = max(abs(rp.analytic), abs(rp.numeric), rp.threshold / at.tol);
    if (scale > 0) r.maxRelError = max(r.maxRelError, abs(rp.analytic - rp.numeric) / scale);
  }
  if (r.verdict === 'pass' && search.rootProbes.length < ROOT_PROBES) {
    // The time limit came before every root probe ran: no floor to stand on, so no pass.
    r.verdict = 'inconclusive';
    result.note = `check of '${slot.name}' stopped at the time limit after ${search.rootProbes.length} of ${ROOT_PROBES} dot-product probes`;
  } else if (r.verdict === 'pass' && search.unexplored > 0 && search.kink === null) {
    r.verdict = 'inconclusive';
    result.note = describeSearch(slot, search);
  }
  return result;
}

function summarise(
  at: Attempt,
  s: number,
  method: CheckMethod,
  analytic: Float64Array[],
  est: ElementEstimates,
  cmp: Comparison,
  refine: RefineSummary,
  dot: DotProbeResult[],
  complete: boolean,
): ParamCheck {
  const slot = at.slots[s];
  let maxAbs = 0;
  let maxRel = 0;
  let worstPos = -1;
  let worstPriority = -1;
  for (let p = 0; p < est.indices.length; p++) {
    const i = est.indices[p];
    for (let k = 0; k < analytic.length; k++) maxAbs = max(maxAbs, abs(analytic[k][i] - est.numeric[k][p]));
    // The worst element is a confirmed mismatch when there is one, then the largest relative error.
    const state = cmp.state[p];
    const priority = state === ElementState.mismatch ? 2 : state === ElementState.suspicious || state === ElementState.uncertain ? 1 : 0;
    // One rule for the worst element (model/types.ts WorstElement): the most serious state first, then the largest relative error.
    if (priority > worstPriority || (priority === worstPriority && cmp.rel[p] > cmp.rel[worstPos])) {
      worstPos = p;
      worstPriority = max(worstPriority, priority);
    }
    maxRel = max(maxRel, cmp.rel[p]);
  }
  let dotMismatch = 0;
  let dotUncertain = 0;
  let dotKink = false;
  for (let p = 0; p < dot.length; p++) {
    maxRel = max(maxRel, dot[p].relError);
    if (dot[p].state === 'mismatch') dotMismatch++;
    if (dot[p].state === 'uncertain') dotUncertain++;
    if (dot[p].state === 'kink') dotKink = true;
  }

  let verdict: Verdict = 'pass';
  let note = '';
  if (refine.confirmed > 0 || dotMismatch > 0) {
    verdict = 'mismatch';
    if (refine.confirmed > 0 && worstPos >= 0) {
      const p = worstPos;
      const k = cmp.worstProbe[p];
      const i = est.indices[p];
      // The relative error of the two numbers shown, so the message agrees with itself.
      const a = analytic[k][i];
      const nv = est.numeric[k][p];
      const shown = abs(a - nv) / max(abs(a), abs(nv), cmp.floors[k], 1e-300);
      cmp.rel[p] = shown;
      maxRel = max(maxRel, shown);
      note = `gradient of '${slot.name}' disagrees at ${elementName(slot, i)}: backward ${formatNumber(a)}, finite differences ${formatNumber(nv)} (relative error ${formatNumber(shown, 3)})`;
    } else {
      note = `gradient of '${slot.name}' fails the dot-product test in ${dotMismatch} of ${dot.length} random directions (worst relative error ${formatNumber(maxRelOf(dot), 3)})`;
    }
  } else if (refine.uncertain > 0 || dotUncertain > 0 || refine.unrefined > 0) {
    verdict = 'inconclusive';
    note = refine.uncertainNote !== ''
      ? `'${slot.name}': ${refine.uncertainNote}`
      : refine.unrefined > 0
        ? `'${slot.name}': ${refine.unrefined} suspicious element${refine.unrefined === 1 ? '' : 's'} could not be refined within the limits`
        : `'${slot.name}': the dot-product estimate is unreliable in ${dotUncertain} direction${dotUncertain === 1 ? '' : 's'}`;
  }
  let kink = refine.kink;
  if (kink === null && dotKink && verdict !== 'mismatch') {
    // A kink met along a random direction: report it at the parameter's first element.
    kink = { slot, index: 0, value: slot.get(0), jump: 0 };
  }

  const worst = worstPos >= 0
    ? {
        index: unravelSlot(slot, est.indices[worstPos]),
        analytic: analytic[cmp.worstProbe[worstPos]][est.indices[worstPos]],
        numeric: est.numeric[cmp.worstProbe[worstPos]][worstPos],
        relError: cmp.rel[worstPos],
      }
    : null;
  const result: ParamResult = {
    name: slot.name,
    verdict,
    maxAbsError: maxAbs,
    maxRelError: maxRel,
    worst,
    shape: copyList(slot.shape),
    dtype: slot.dtype,
    method,
    elements: slot.size,
    checkedElements: est.indices.length,
    hints: [],
  };
  const evidence: ParamEvidence = { slot, analytic, est, cmp, tol: at.tol, complete: complete && est.indices.length === slot.size };
  const check: ParamCheck = { result, evidence, kink, note, worstPos };
  if (refine.stoppedAt !== undefined && verdict === 'inconclusive') {
    check.timeStop = { param: slot.name, stage: 'suspicious elements refined', done: refine.stoppedAt.done, total: refine.stoppedAt.total };
  }
  return check;
}

function maxRelOf(dot: DotProbeResult[]): number {
  let m = 0;
  for (let p = 0; p < dot.length; p++) m = max(m, dot[p].relError);
  return m;
}

/** Step scan at the worst element and the error map of a 2-D parameter. */
function addReportData(at: Attempt, s: number, c: ParamCheck): void {
  const r = c.result;
  const pos = c.worstPos;
  const ev = c.evidence;
  if (ev === null || pos < 0) return;
  const slot = at.slots[s];
  if (ev.complete && slot.shape.length === 2 && slot.size <= ERROR_MAP_MAX_ELEMENTS) {
    const map: number[] = [];
    for (let p = 0; p < ev.est.indices.length; p++) map[ev.est.indices[p]] = ev.cmp.rel[p];
    r.errorMap = map;
  }
  const scans = at.settings.stepScans ?? 'all';
  if (scans === 'none' || (scans === 'mismatch' && r.verdict !== 'mismatch')) return;
  if (26 * at.forwardMs > STEP_SCAN_BUDGET_MS || at.outOfTime()) return;
  const i = ev.est.indices[pos];
  const k = ev.cmp.worstProbe[pos];
  const line = elementLine(at.h, slot, i);
  // Probed parameters compared their elements under the probes' upstream vectors.
  const ws = r.method === 'dot-product' && at.dotUs.length > 0 ? at.dotUs : at.ws;
  r.stepScan = stepScan(line, ws[k], ev.analytic[k][i], max(1, abs(slot.get(i))));
}

/** A copy of a list without Array.prototype.slice (user code may have replaced it). */
function copyList(list: readonly number[]): number[] {
  const out: number[] = [];
  for (let i = 0; i < list.length; i++) out[i] = list[i];
  return out;
}
