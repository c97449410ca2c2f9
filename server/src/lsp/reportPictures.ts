// The report page's error-against-step picture of a passing parameter. A check draws none by
// default (26 forward calls for a picture few people open, no part in the verdict), so when the
// page asks for an op whose latest result lacks it, that one op is checked again with
// settings.stepScans 'all': the same text, settings, seed and inputs, so the same verdict and
// figures, now with the picture. The re-check passes every gate a check passes (trust, the
// isolated interpreter, the project file, the op's annotations) and never fails the page.

import type { OpDescriptor, OpResult } from '../model/types';
import { opStanding, type RunPermission } from './opStanding';
import type { Session } from './session';

/**
 * Whether a result has a passing parameter but no passing parameter's picture, and a re-check
 * could draw one: only @backward checks draw pictures, and a result that ended in an error or
 * at its time limit would end the same way again.
 */
export function lacksPassingPicture(result: OpResult): boolean {
  if ((result.kind ?? 'backward') !== 'backward' || result.verdict === 'error' || result.stoppedAtTimeLimit) return false;
  const passing = result.params.filter((p) => p.verdict === 'pass');
  return passing.length > 0 && passing.every((p) => p.stepScan === undefined);
}

/**
 * The result the report page shows: `result` itself when it has its pictures, else the op's
 * re-check with every picture (now the op's latest result, so diagnostics, hovers and lenses
 * agree with the page). `result` when the re-check may not run, is not needed (the file changed
 * since, or that result already had every picture it could), fails, is cancelled, or ends
 * otherwise than `result` (stopped by the time limit on a loaded machine): then `result` stays
 * the op's latest too.
 */
export async function withPassingPicture(session: Session, key: string, op: OpDescriptor, result: OpResult, permission: RunPermission, signal?: AbortSignal): Promise<OpResult> {
  if (!lacksPassingPicture(result) || !opStanding(op, permission).may) return result;
  try {
    const [again] = await session.check(key, { forwards: [op.forward], stepScans: 'all', picturesOnly: true, ...(signal ? { signal } : {}) });
    // None when it did not run, was cancelled, or ended otherwise than the result it repeats.
    return again ?? result;
  } catch (err) {
    // CheckRefused (trust withdrawn, a broken project file) or a failed run: the page shows what it had.
    session.log(`report of ${op.forward}: no re-check for the step picture (${err instanceof Error ? err.message : String(err)})`);
    return result;
  }
}
