// The check of one parameter of a @backward op at the drawn point: numeric estimates (grouped,
// column by column, or dot-product probes split down to elements), comparison with the
// backward's gradients, and refinement of suspicious elements.

import { F64, I32, abs, max } from './builtins';
import type { UpstreamProbes } from './backwardCalls';
import { dotProductProbes } from './dotProductCheck';
import { clockEvery, estimateColumns } from './fullCheck';
import { estimateGrouped } from './groupedCheck';
import { compareElements, floorsFor, type ElementEstimates } from './judge';
import type { Baseline } from './kindBaseline';
import { GROUPED_WIDENINGS, PROBE_SWITCH_CALLS, widened, type Structure } from './methodChoice';
import type { OpHarness } from './opHarness';
import type { ParamSlot } from './paramSlot';
import { summarise, type ParamCheck } from './paramSummary';
import { relativeFloorFactor, unitRoundoff, type Precision } from './precision';
import type { RandomSource } from './random';
import { refineSuspicious, type RefineSummary } from './refine';
import type { CheckSettings } from './settings';
import { ROOT_PROBES, describeSearch, splitSearch } from './splitSearch';
import type { CheckMethod } from '../model/types';

/** What the check of every parameter of one attempt shares. */
export interface ParamCheckContext {
  h: OpHarness;
  settings: CheckSettings;
  base: Baseline;
  probes: UpstreamProbes;
  /** Per parameter: the method chosen up front and the Jacobian structure it rests on. */
  choices: { method: CheckMethod; structure: Structure | null }[];
  outOfTime: () => boolean;
  /** The random stream of parameter s's directions and subsets (one of its own per parameter). */
  directions: (s: number) => RandomSource;
}

/** Numeric estimates, comparison and refinement of one parameter. */
export function checkParam(at: ParamCheckContext, s: number): ParamCheck {
  const slot = at.base.slots[s];
  const analytic = at.probes.analytic[s];
  const n = slot.size;
  let est: ElementEstimates | null = null;
  const complete = true;
  let method = at.choices[s].method;
  if (method === 'grouped') {
    // An output moved outside the hypothesised bands: widen them, and after GROUPED_WIDENINGS
    // use a general method. A wrong structure guess costs calls, never a verdict.
    let st: Structure | null = at.choices[s].structure;
    for (let widening = 0; st !== null && est === null; widening++) {
      est = estimateGrouped(at.h, slot, st, at.probes.ws, at.base.uOut, at.outOfTime);
      st = est === null && widening < GROUPED_WIDENINGS ? widened(st) : null;
    }
    if (est === null) method = n > at.settings.largeParamElements || 2 * n > PROBE_SWITCH_CALLS ? 'dot-product' : 'full';
  }
  // Each parameter draws its directions and its subset from streams of its own.
  const dirRandom = at.directions(s);
  if (est !== null) {
    // Grouped estimates rest on the structure guess: a coupling the probes did not see would be
    // credited to the wrong element, or lost, and a backward that misses the same coupling would
    // agree with them. One dot-product probe along a random direction (2 forward calls, reusing
    // the first upstream probe's backward) looks at the whole parameter. It cannot tell a missed
    // coupling from a kink met along the direction (a subgradient is not linear in the
    // direction), so its failure is never a verdict by itself: the parameter is checked again
    // column by column, or, when that costs more than probing, by probes split down to elements.
    const safety = dotProductProbes(at.h, slot, [at.probes.ws[0]], [analytic[0]], at.base.y0, at.base.uOut, at.base.tol, dirRandom);
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
    est = estimateColumns(at.h, slot, all, at.probes.ws, at.base.uOut, at.outOfTime, clockEvery(at.base.forwardMs));
  }
  const floors = floorsFor(analytic, est, relativeFloorFactor(floorPrecisionOf(at, slot)));
  const cmp = compareElements(analytic, est, at.base.tol, floors);
  const refine = refineSuspicious(at.h, slot, analytic, est, cmp, at.probes.ws, at.base.y0, at.base.uOut, at.base.tol, at.outOfTime, method === 'grouped');
  const result = summarise(slot, at.base.tol, method, analytic, est, cmp, refine, complete);
  // Every element compared against the tolerance: the smallest error caught is the tolerance itself.
  result.result.detectionFloor = at.base.tol;
  return result;
}

/** The precision behind the zero level of a parameter's gradient: float32 when it or the output is. */
function floorPrecisionOf(at: ParamCheckContext, slot: ParamSlot): Precision {
  return slot.precision === 'f32' || at.base.precision === 'f32' ? 'f32' : 'f64';
}

/**
 * A parameter whose exact grouping costs more forward calls than probing: dot-product probes
 * judged against their own error, split down to single elements (splitSearch.ts). Only single
 * elements, compared against the tolerance with their refined estimates, make a verdict.
 */
function probeParam(at: ParamCheckContext, s: number, random: RandomSource): ParamCheck {
  const slot = at.base.slots[s];
  const probes = at.probes;
  // The probes' own upstream vectors when the method was chosen up front; the K upstream
  // vectors when grouping was given up on the way.
  const us = probes.dotUs.length > 0 ? probes.dotUs : probes.ws;
  const grads = probes.dotUs.length > 0 ? probes.dotGrads[s] : probes.analytic[s];
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
    { h: at.h, slot, y0: at.base.y0, uOut: at.base.uOut, uGrad, tol: at.base.tol, floorOf: (p) => floorLevel[p], outOfTime: at.outOfTime },
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
  const result = summarise(slot, at.base.tol, 'dot-product', grads, search.est, search.cmp, refine, false);
  const r = result.result;
  // Infinite when the root probes could not all run (time): no floor to state.
  if (search.detectionFloor < Infinity) r.detectionFloor = search.detectionFloor;
  // The probes' worst relative discrepancy (against their threshold's scale) joins the figures.
  for (let q = 0; q < search.rootProbes.length; q++) {
    const rp = search.rootProbes[q];
    const scale = max(abs(rp.analytic), abs(rp.numeric), rp.threshold / at.base.tol);
    if (scale > 0) r.maxRelError = max(r.maxRelError, abs(rp.analytic - rp.numeric) / scale);
  }
  if (r.verdict === 'pass' && search.rootProbes.length < ROOT_PROBES) {
    // The time limit came before every root probe ran: no floor to stand on, so no pass.
    r.verdict = 'inconclusive';
    result.note = `check of '${slot.name}' stopped at the time limit after ${search.rootProbes.length} of ${ROOT_PROBES} dot-product probes`;
    result.timeStop = { param: slot.name, stage: 'dot-product probes', done: search.rootProbes.length, total: ROOT_PROBES };
  } else if (r.verdict === 'pass' && search.unexplored > 0 && search.kink === null) {
    r.verdict = 'inconclusive';
    result.note = describeSearch(slot, search);
  }
  if (r.verdict === 'inconclusive' && search.stoppedByTime && result.timeStop === undefined) {
    // The search or a leaf's refinement was cut short by the time limit: an unfinished check.
    const calls = at.h.calls.forward + at.h.calls.backward;
    result.timeStop = { param: slot.name, stage: 'forward calls', done: calls, total: calls };
  }
  return result;
}
