// One attempt of a @backward check, stage by stage: the baseline at a drawn point, the method of
// each parameter, the backward's gradients for the upstream vectors, each parameter's check, and
// then either a kink (the caller redraws) or the attempt's outcome.

import { fail } from './failure';
import { backwardCaller, callUpstreamProbes } from './backwardCalls';
import { attemptOutcome } from './attemptReport';
import { takeBaseline, type AttemptContext, type AttemptResult } from './kindBaseline';
import { chooseMethod } from './methodChoice';
import { checkParam, type ParamCheckContext } from './paramCheck';
import type { ParamCheck } from './paramSummary';
import { STREAM, STREAM_STRIDE, substream } from './random';
import type { KinkReport } from './refine';
import type { CheckMethod, ParamResult } from '../model/types';

/** One attempt at the inputs drawn for ctx.attempt (see runAttempts in kindBaseline.ts). */
export function runBackwardAttempt(ctx: AttemptContext): AttemptResult {
  const { h, op, settings } = ctx;
  // Baseline: inputs, output at the sample point, input mutation, determinism, precision and
  // tolerance — the same for every op kind (kindBaseline.ts).
  const base = takeBaseline(h, op, settings, ctx.stream(STREAM.inputs), ctx.clock);
  if (!h.takesUpstream && base.layout.kind !== 'number') {
    fail(`the backward takes no $dy, so the forward must return a number; it returned ${base.layout.size} values`);
  }
  const slots = base.slots;
  // Upstream vectors: uniform in [-1, 1], or the plain gradient when there is no $dy. Drawn
  // before the method choice (which uses a stream of its own) and the backward calls.
  const upstreamRandom = ctx.stream(STREAM.upstream);
  // Structure of each parameter's Jacobian (forward calls only), then the method.
  const choices: ParamCheckContext['choices'] = [];
  const structureRandom = ctx.stream(STREAM.structure);
  for (let s = 0; s < slots.length; s++) choices[s] = chooseMethod(h, slots[s], base.y0, settings, structureRandom);
  const methods: CheckMethod[] = [];
  for (let s = 0; s < slots.length; s++) methods[s] = choices[s].method;
  // Backward calls: K upstream probes, plus the dot-product probes when a parameter needs them.
  const callBackward = backwardCaller(h, base);
  const probes = callUpstreamProbes(h, base, settings, methods, upstreamRandom, callBackward);

  const directionsBase = ctx.attempt * STREAM_STRIDE + STREAM.directions;
  const at: ParamCheckContext = {
    h,
    settings,
    base,
    probes,
    choices,
    outOfTime: ctx.outOfTime,
    directions: (s) => substream(ctx.seed, directionsBase, s),
  };
  const checks: ParamCheck[] = [];
  for (let s = 0; s < slots.length; s++) checks[s] = checkParam(at, s);

  // A kink and no mismatch: the caller redraws the inputs (a kink is never a mismatch).
  let anyMismatch = false;
  let kink: KinkReport | null = null;
  for (let s = 0; s < checks.length; s++) {
    if (checks[s].result.verdict === 'mismatch') anyMismatch = true;
    if (checks[s].kink !== null && kink === null) kink = checks[s].kink;
  }
  if (!anyMismatch && kink !== null) {
    const params: ParamResult[] = [];
    for (let s = 0; s < checks.length; s++) {
      params[s] = checks[s].result;
      if (checks[s].kink !== null) params[s].verdict = 'inconclusive';
    }
    return { kink, params, inputs: base.inputs };
  }
  return attemptOutcome({ h, settings, base, probes, callBackward, outOfTime: ctx.outOfTime, seed: ctx.seed }, checks);
}
