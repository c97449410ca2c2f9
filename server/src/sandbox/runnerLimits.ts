// What a job becomes when the pool stops its runner from outside: past the time limit (the
// runner has no timeout inside, child.ts) or over the memory limit. Kept apart from the pool so
// the wording of both lives in one place.
import type { RunFailure } from './jobTypes';
import { RESIDENT_HEADROOM_MB } from './memoryWatch';

/** The last step a runner reported for its job ('start': none yet, the runner's own setup). */
export type RunnerStep = 'start' | 'load' | 'check';

/**
 * A job that ran past its limit, by the step it was in: stuck in the module's own top-level code
 * (every op of its file would hang the same way: cause 'load'), or in the check. The console text
 * of a stopped process is lost.
 */
export function runnerTimeoutFailure(limitMs: number, step: RunnerStep, startedAt: number): RunFailure {
  const elapsedMs = Date.now() - startedAt;
  if (step === 'load') return { error: `timed out after ${limitMs} ms while loading the module (its top-level code did not finish)`, elapsedMs, cause: 'load' };
  return { error: `timed out after ${limitMs} ms (the runner did not stop by itself and was killed)`, elapsedMs, cause: 'timeout' };
}

/** A job whose runner's resident memory passed the limit plus the runtime's headroom. */
export function runnerMemoryFailure(usedMb: number, memoryLimitMb: number, startedAt: number): RunFailure {
  return {
    error: `the op used ${Math.round(usedMb)} MiB of memory, over the limit of ${memoryLimitMb + RESIDENT_HEADROOM_MB} MiB (memory limit ${memoryLimitMb} MiB plus ${RESIDENT_HEADROOM_MB} MiB for the runtime); the runner was stopped`,
    elapsedMs: Date.now() - startedAt,
    cause: 'memory',
  };
}
