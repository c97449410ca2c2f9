// Whether an op may run and, if not, why: decided once here for every editor feature (the
// diagnostics, code lenses, hovers, the Testing view, the report and regression-test requests,
// the check requests). Each feature words the answer in its own space; the reasons' words are here.

import type { OpDescriptor } from '../model/types';
import type { ReasonCode } from './protocol';

/** Why no code of the workspace runs while it is untrusted: the one wording of it. */
export const UNTRUSTED_REASON = 'the workspace is not trusted, so no code from it runs';

/** What decides whether a folder's code may run (DocumentFacts has these). */
export interface RunPermission {
  trusted: boolean;
  /** Untrusted, but the user opted in to checks in the isolated interpreter. */
  isolated: boolean;
  /** A broken project file: nothing runs. */
  configError?: { message: string; file?: string };
}

/** Where an op stands before any result: it may run, or it is held back for a reason. */
export type OpStanding = { may: true } | { may: false; code: Extract<ReasonCode, 'annotation-error' | 'config-error' | 'untrusted'>; reason: string };

/** Whether code of this folder may run at all. */
export function folderStanding(permission: RunPermission): OpStanding {
  if (permission.configError) return { may: false, code: 'config-error', reason: permission.configError.message };
  if (!permission.trusted && !permission.isolated) return { may: false, code: 'untrusted', reason: UNTRUSTED_REASON };
  return { may: true };
}

/** Whether this op may run: its annotations first (known without running anything), then its folder. */
export function opStanding(op: OpDescriptor, permission: RunPermission): OpStanding {
  const first = op.problems[0];
  if (first) {
    const more = op.problems.length > 1 ? ` (and ${op.problems.length - 1} more)` : '';
    return { may: false, code: 'annotation-error', reason: `${op.forward} has annotation errors; fix them first: ${first.message}${more}` };
  }
  return folderStanding(permission);
}
