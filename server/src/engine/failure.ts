// The one way a check stops early: a verdict (`error` or `inconclusive`) with a message naming
// the part of the op at fault. runCheck catches it and turns it into the outcome.

import type { TimeLimitStop, Verdict } from '../model/types';

export class CheckStop extends Error {
  constructor(
    readonly verdict: Extract<Verdict, 'error' | 'inconclusive'>,
    message: string,
    /** What user code threw, when the stop is an exception of the op's own code. */
    readonly thrown?: unknown,
    /** Set when the time limit stopped the check: how far it got (the limit is added by runCheck). */
    readonly timeLimit?: Omit<TimeLimitStop, 'timeLimitMs'>,
  ) {
    super(message);
  }
}

/** Stops the check with verdict `error`. */
export function fail(message: string): never {
  throw new CheckStop('error', message);
}

/** A stop that is the engine's own fault (a broken invariant), not the op's: failure `internal`. */
export class EngineFault extends CheckStop {}

/** Stops the check with verdict `error` for a broken invariant of the engine itself. */
export function failInternal(message: string): never {
  throw new EngineFault('error', `internal error in the check engine: ${message}`);
}

/** Stops the check with verdict `error` because user code threw `thrown` (its place is reported). */
export function failThrown(message: string, thrown: unknown): never {
  throw new CheckStop('error', message, thrown);
}

/** Stops the check with verdict `inconclusive`. */
export function giveUp(message: string): never {
  throw new CheckStop('inconclusive', message);
}

/** Stops the check with verdict `inconclusive` because its time limit ran out, saying how far it got. */
export function stopAtTimeLimit(message: string, progress: Omit<TimeLimitStop, 'timeLimitMs'>): never {
  throw new CheckStop('inconclusive', message, undefined, progress);
}
