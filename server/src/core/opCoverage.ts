// An op's coverage from the coverage pass (a second run of the same job in coverage runners),
// or why none is claimed.
import type { CheckOutcome, OpCoverage, OpDescriptor } from '../model/types';
import { opCoverage } from '../sandbox/coverageMap';
import type { RunResult } from '../sandbox/jobTypes';
import type { MappedSegment } from '../sandbox/sourceMap';

/** Why an op run in the isolated interpreter has no coverage. */
export const INTERPRETER_NO_COVERAGE = 'not collected: the op ran in the isolated interpreter, which does not record coverage';

/**
 * The op's coverage from the coverage pass. It describes the verdict's check only when the pass
 * repeated that check: same verdict and the same number of forward and backward calls (the
 * engine's time budget could make a slower run do less). Otherwise no coverage is claimed.
 */
export function coverageOf(op: OpDescriptor, outcome: CheckOutcome, run: RunResult, checkedText: string, bundleCode: string, segments: () => MappedSegment[]): OpCoverage {
  if (!('outcome' in run)) return { collected: false, reason: `not collected: the coverage run failed (${run.error})` };
  if (!run.coverage) return { collected: false, reason: 'not collected: the coverage runner returned no coverage' };
  const same = run.outcome.verdict === outcome.verdict && run.outcome.calls.forward === outcome.calls.forward && run.outcome.calls.backward === outcome.calls.backward;
  if (!same)
    return { collected: false, reason: 'not collected: the coverage run did not repeat the check exactly (different calls), so its coverage would not describe this check' };
  try {
    return opCoverage({ op, checkedText, bundleCode, segments: segments(), blocks: run.coverage });
  } catch (e) {
    return { collected: false, reason: `not collected: ${(e as Error).message}` };
  }
}
