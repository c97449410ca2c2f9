// Data for the client's Testing view and status bar: every op of a file with where it stands,
// computed from the same facts as the diagnostics.

import { oneLine } from '../present/format';
import type { DocumentFacts } from './documentFacts';
import { opNameRange, verdictSentence } from './format';
import { opStanding } from './opStanding';
import type { FileOps, OpSummary, StatusParams } from './protocol';

export function opSummaries(facts: DocumentFacts): FileOps {
  const ops: OpSummary[] = facts.snapshot.ops.map((op) => {
    const range = opNameRange(op, facts.snapshot.lines);
    const standing = opStanding(op, facts);
    if (!standing.may && standing.code === 'annotation-error')
      return { forward: op.forward, range, state: 'error', message: `annotation error: ${oneLine(op.problems[0]!.message)}` };
    if (!standing.may) return { forward: op.forward, range, state: 'not-run', message: `not checked: ${oneLine(standing.reason)}` };
    if (facts.isRunning(op.forward)) return { forward: op.forward, range, state: 'checking', message: 'checking…' };
    const result = facts.latest(op.forward);
    if (!result) return { forward: op.forward, range, state: 'unchecked', message: 'not checked yet' };
    const seq = facts.resultSeq?.(op.forward);
    return { forward: op.forward, range, state: result.verdict, message: verdictSentence(result), elapsedMs: result.elapsedMs, ...(seq !== undefined ? { seq } : {}) };
  });
  return { uri: facts.snapshot.uri, ops };
}

/** Counts over files for the status bar. */
export function statusOf(files: FileOps[], trusted: boolean, opsRun: number, isolated: boolean): StatusParams {
  const status: StatusParams = { pass: 0, mismatch: 0, inconclusive: 0, error: 0, checking: 0, trusted, opsRun, isolated };
  for (const file of files) {
    for (const op of file.ops) {
      if (op.state === 'checking') status.checking++;
      else if (op.state === 'pass' || op.state === 'mismatch' || op.state === 'inconclusive' || op.state === 'error') status[op.state]++;
    }
  }
  return status;
}
