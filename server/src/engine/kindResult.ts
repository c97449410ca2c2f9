// Parameter results of the derivative kinds (@jacobian, @tangent, @hessian): one builder of a
// ParamResult, the tally of comparisons along random directions (tangents, H·v), and the
// outcome of an attempt from its parameters' checks.

import { copyList, max } from './builtins';
import { combinedVerdict, type AttemptContext, type AttemptResult } from './kindBaseline';
import type { ParamSlot } from './paramSlot';
import type { KinkReport } from './refine';
import type { CheckMethod, CheckOutcome, ParamResult, Verdict, WorstElement } from '../model/types';

/** One parameter's check by a derivative kind. */
export interface KindParamCheck {
  result: ParamResult;
  /** A kink met on the way (the attempt redraws when no parameter mismatched), or null. */
  kink: KinkReport | null;
  note: string;
}

/** The figures of one parameter's result. */
export interface KindFigures {
  verdict: Verdict;
  method: CheckMethod;
  maxAbs: number;
  maxRel: number;
  worst: WorstElement | null;
  checkedElements: number;
  hints: string[];
}

/** A parameter's result: its name, shape and type from the slot, the figures from the check. */
export function kindParamResult(slot: ParamSlot, f: KindFigures): ParamResult {
  return {
    name: slot.name,
    verdict: f.verdict,
    maxAbsError: f.maxAbs,
    maxRelError: f.maxRel,
    worst: f.worst,
    shape: copyList(slot.shape),
    dtype: slot.dtype,
    method: f.method,
    elements: slot.size,
    checkedElements: f.checkedElements,
    hints: f.hints,
  };
}

/** What comparing a derivative along one random direction found. */
export interface DirectionFinding {
  verdict: Verdict;
  note: string;
  maxAbs: number;
  maxRel: number;
  kink: KinkReport | null;
}

/**
 * The comparisons of one parameter along its random directions: the largest errors, the first
 * kink, and the verdict and note of the most serious finding (a mismatch, else the first
 * inconclusive one). The directions stop at the first mismatch (`mismatched`).
 */
export class DirectionTally {
  verdict: Verdict = 'pass';
  note = '';
  maxAbs = 0;
  maxRel = 0;
  kink: KinkReport | null = null;
  readonly hints: string[] = [];

  get mismatched(): boolean {
    return this.verdict === 'mismatch';
  }

  add(f: DirectionFinding): void {
    this.maxAbs = max(this.maxAbs, f.maxAbs);
    this.maxRel = max(this.maxRel, f.maxRel);
    if (f.kink !== null && this.kink === null) this.kink = f.kink;
    if (f.verdict === 'mismatch' || (f.verdict === 'inconclusive' && this.verdict === 'pass')) {
      this.verdict = f.verdict;
      this.note = f.note;
    }
  }

  /** The parameter's check: every element moved along each direction, none named as the worst. */
  finish(slot: ParamSlot, method: CheckMethod): KindParamCheck {
    const result = kindParamResult(slot, {
      verdict: this.verdict,
      method,
      maxAbs: this.maxAbs,
      maxRel: this.maxRel,
      worst: null,
      checkedElements: slot.size,
      hints: this.hints,
    });
    return { result, note: this.note, kink: this.verdict === 'mismatch' ? null : this.kink };
  }
}

/** A kink met along a random direction, reported at the parameter's first element. */
export function directionKink(slot: ParamSlot, jump: number | null): KinkReport | null {
  return jump === null ? null : { slot, index: 0, value: slot.get(0), jump };
}

/** Turns per-parameter checks into an attempt result (a kink without a mismatch asks for a redraw). */
export function kindAttemptResult(ctx: AttemptContext, checks: KindParamCheck[], inputs: CheckOutcome['inputs'], lead: string): AttemptResult {
  const params: ParamResult[] = [];
  let kink: KinkReport | null = null;
  let anyMismatch = false;
  for (let s = 0; s < checks.length; s++) {
    params[s] = checks[s].result;
    if (checks[s].result.verdict === 'mismatch') anyMismatch = true;
    if (kink === null && checks[s].kink !== null) kink = checks[s].kink;
  }
  if (!anyMismatch && kink !== null) {
    for (let s = 0; s < checks.length; s++) if (checks[s].kink !== null) params[s].verdict = 'inconclusive';
    return { kink, params, inputs };
  }
  let message = lead;
  for (let s = 0; s < checks.length; s++) if (checks[s].note) message += (message ? '; ' : '') + checks[s].note;
  const outcome: CheckOutcome = {
    verdict: combinedVerdict(params),
    seed: ctx.seed,
    message,
    hints: [],
    params,
    calls: { forward: ctx.h.calls.forward, backward: ctx.h.calls.backward },
  };
  if (inputs !== undefined) outcome.inputs = inputs;
  return outcome;
}
