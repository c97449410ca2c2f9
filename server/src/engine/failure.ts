// The one way a check stops early: a verdict (`error` or `inconclusive`) with a message naming
// the part of the op at fault. runCheck catches it and turns it into the outcome.

import type { Verdict } from './types';

export class CheckStop extends Error {
  constructor(
    readonly verdict: Extract<Verdict, 'error' | 'inconclusive'>,
    message: string,
    /** What user code threw, when the stop is an exception of the op's own code. */
    readonly thrown?: unknown,
  ) {
    super(message);
  }
}

/** Stops the check with verdict `error`. */
export function fail(message: string): never {
  throw new CheckStop('error', message);
}

/** Stops the check with verdict `error` because user code threw `thrown` (its place is reported). */
export function failThrown(message: string, thrown: unknown): never {
  throw new CheckStop('error', message, thrown);
}

/** Stops the check with verdict `inconclusive`. */
export function giveUp(message: string): never {
  throw new CheckStop('inconclusive', message);
}
