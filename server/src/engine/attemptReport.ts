// What a finished @backward attempt reports: hints (per parameter, swapped gradients, float32
// outputs, which named output is wrong), step scans and error maps, and the outcome assembled
// from the parameters' checks.

import { abs, max } from './builtins';
import type { BackwardCaller, UpstreamProbes } from './backwardCalls';
import { CheckStop, EngineFault } from './failure';
import { float32OutputHint, paramHints, swapHints, type ParamEvidence } from './hints';
import type { Baseline } from './kindBaseline';
import { elementLine } from './lines';
import type { OpHarness } from './opHarness';
import { blameOutput } from './outputBlame';
import type { ParamCheck } from './paramSummary';
import { ERROR_MAP_MAX_ELEMENTS, stepScan } from './reportData';
import type { CheckSettings } from './settings';
import type { CheckOutcome, ParamResult, Verdict } from '../model/types';

/**
 * Most time, in milliseconds, a step scan may cost (26 forward calls, estimated from the timed
 * baseline calls); above it the report goes without the scan. Our choice: the scan is a picture,
 * not a verdict, and should not double the check of a large op.
 */
const STEP_SCAN_BUDGET_MS = 150;

/** What the report of one attempt reads besides the parameters' checks. */
export interface AttemptReportContext {
  h: OpHarness;
  settings: CheckSettings;
  base: Baseline;
  probes: UpstreamProbes;
  callBackward: BackwardCaller;
  outOfTime: () => boolean;
  seed: number;
}

/** The outcome of an attempt whose parameters were all checked (no kink left to redraw). */
export function attemptOutcome(at: AttemptReportContext, checks: ParamCheck[]): CheckOutcome {
  const { h, settings, base } = at;
  const slots = base.slots;
  let anyMismatch = false;
  let anyInconclusive = false;
  for (let s = 0; s < checks.length; s++) {
    if (checks[s].result.verdict === 'mismatch') anyMismatch = true;
    if (checks[s].result.verdict === 'inconclusive') anyInconclusive = true;
  }

  // Hints, step scans and error maps for the report.
  // Plain loops, not Array.prototype methods: the op's module may have replaced those.
  const mismatched: ParamEvidence[] = [];
  for (let s = 0; s < checks.length; s++) {
    const c = checks[s];
    if (c.evidence === null || c.result.verdict !== 'mismatch') continue;
    c.result.hints = paramHints(c.evidence, slots);
    mismatched[mismatched.length] = c.evidence;
  }
  const opHints = anyMismatch ? swapHints(mismatched) : [];
  // Several named outputs: say which one's term is wrong, when one output accounts for it.
  if (anyMismatch && base.layout.kind === 'object' && !at.outOfTime()) {
    for (let s = 0; s < checks.length; s++) {
      const c = checks[s];
      if (c.result.verdict !== 'mismatch' || c.evidence === null || c.worstPos < 0) continue;
      const w = comparedUpstreams(at, c.result.method)[c.evidence.cmp.worstProbe[c.worstPos]];
      const blame = blameOutput(h, base.layout, slots[s], s, c.evidence.est.indices[c.worstPos], w, base.tol, at.callBackward);
      if (blame !== null) {
        c.result.hints[c.result.hints.length] = blame;
        c.note += ` — ${blame}`;
      }
    }
  }
  // Forward calls the error-against-step pictures cost: part of `calls.forward`, not of the verdict.
  const beforeScans = h.calls.forward;
  // A passing parameter's picture only when asked for ('all': the editor's report page asks).
  const pictured = settings.stepScans === 'all' ? passingPicture(checks) : -1;
  let drawing = true;
  for (let s = 0; s < checks.length; s++) drawing = addReportData(at, s, checks[s], s === pictured, drawing);
  const stepScanForward = h.calls.forward - beforeScans;

  const verdict: Verdict = anyMismatch ? 'mismatch' : anyInconclusive ? 'inconclusive' : 'pass';
  if (verdict !== 'pass' && base.precision === 'f64') {
    // The check ran at float64 precision, yet the op may compute in float32: name the precision.
    const f32 = float32OutputHint(base.y0);
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
    seed: at.seed,
    message,
    hints: opHints,
    params,
    calls: { forward: h.calls.forward, backward: h.calls.backward },
  };
  if (stepScanForward > 0) outcome.calls.stepScanForward = stepScanForward;
  if (base.inputs !== undefined) outcome.inputs = base.inputs;
  for (let s = 0; s < checks.length; s++) {
    const stop = checks[s].timeStop;
    if (stop !== undefined && outcome.stoppedAtTimeLimit === undefined) outcome.stoppedAtTimeLimit = { ...stop, timeLimitMs: settings.timeLimitMs };
  }
  return outcome;
}

/**
 * The one passing parameter whose picture the report shows under settings.stepScans 'all': the
 * one nearest its tolerance (largest relative error), or -1. On a pass the picture shows where
 * the step sat on the V of truncation against roundoff, and one parameter shows it as well as
 * three; each is 26 forward calls, more than the whole check of a small grouped op (our choice:
 * at 100 elements a three-field layer spent 78 of its 115 forward calls on pictures). By default
 * no passing parameter is pictured: the picture plays no part in the verdict, and at 100
 * elements an elementwise op's check was 31 forward calls with it, 7 without.
 */
function passingPicture(checks: ParamCheck[]): number {
  let best = -1;
  for (let s = 0; s < checks.length; s++) {
    const r = checks[s].result;
    if (r.verdict !== 'pass' || checks[s].evidence === null || checks[s].worstPos < 0) continue;
    if (best < 0 || r.maxRelError > checks[best].result.maxRelError) best = s;
  }
  return best;
}

/**
 * The error map of a 2-D parameter, and the step scan at the worst element: for every parameter
 * that does not pass (unless settings.stepScans narrows that), and for the passing one
 * `pictured` names (settings.stepScans 'all'), while `drawing`. Returns whether later
 * parameters may still be pictured: not after a scan stopped.
 */
function addReportData(at: AttemptReportContext, s: number, c: ParamCheck, pictured: boolean, drawing: boolean): boolean {
  const r = c.result;
  const pos = c.worstPos;
  const ev = c.evidence;
  if (ev === null || pos < 0) return drawing;
  const slot = at.base.slots[s];
  if (ev.complete && slot.shape.length === 2 && slot.size <= ERROR_MAP_MAX_ELEMENTS) {
    const map: number[] = [];
    for (let p = 0; p < ev.est.indices.length; p++) map[ev.est.indices[p]] = ev.cmp.rel[p];
    r.errorMap = map;
  }
  const scans = at.settings.stepScans;
  if (!drawing || scans === 'none' || (scans === 'mismatch' && r.verdict !== 'mismatch')) return drawing;
  if (r.verdict === 'pass' && !pictured) return true;
  if (26 * at.base.forwardMs > STEP_SCAN_BUDGET_MS || at.outOfTime()) return true;
  const i = ev.est.indices[pos];
  const k = ev.cmp.worstProbe[pos];
  const line = elementLine(at.h, slot, i);
  try {
    r.stepScan = stepScan(line, comparedUpstreams(at, r.method)[k], ev.analytic[k][i], max(1, abs(slot.get(i))));
  } catch (e) {
    // The picture plays no part in the verdict: a forward that throws at one of its steps (they
    // reach 0.1·max(1, |x|), beyond a sample range of one point), or the engine's hard stop at
    // the time limit between its calls, costs the pictures, never the outcome. Seen: a passing
    // op whose forward threw beyond its one sample point ended in `error` when asked for 'all'.
    if (!(e instanceof CheckStop) || e instanceof EngineFault) throw e;
    return false;
  }
  return true;
}

/**
 * The upstream vectors a parameter's elements were compared under (what cmp.worstProbe indexes):
 * the probes' for a probed parameter, which can outnumber the K others (seen: an op with two
 * named outputs whose probed parameter was wrong ended in an internal error when its blame read
 * the K vectors at a probe's index).
 */
function comparedUpstreams(at: AttemptReportContext, method: string): Float64Array[] {
  return method === 'dot-product' && at.probes.dotUs.length > 0 ? at.probes.dotUs : at.probes.ws;
}
