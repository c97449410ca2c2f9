// runCheck: one op's whole gradient check — the engine's entry. A @backward op runs attempts
// (backwardAttempt.ts: draw inputs, call forward and backward, estimate and compare every
// parameter, refine, redraw after kinks); the other derivative kinds go to kindCheck.ts.

import { CheckStop } from './failure';
import { runBackwardAttempt } from './backwardAttempt';
import { emptyOutcome, internalErrorOutcome, runAttempts, stoppedOutcome } from './kindBaseline';
import { runDerivativeKind } from './kindCheck';
import { OpHarness } from './opHarness';
import { finiteOnly } from './reportData';
import { DEFAULT_SETTINGS, type CheckSettings } from './settings';
import type { CheckOutcome, OpDescriptor } from '../model/types';

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
    const outcome = runAttempts(h, op, settings, seed, deadline, clock, runBackwardAttempt);
    if (op.target.libraryGradient && outcome.verdict !== 'error') outcome.gradientSource = 'library';
    return outcome;
  } catch (e) {
    if (e instanceof CheckStop) return finiteOnly(stoppedOutcome(e, seed, timeLimitMs, harness));
    return finiteOnly(internalErrorOutcome(e, seed, calls));
  }
}
