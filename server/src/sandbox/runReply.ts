// Turns a runner's answer (the process runner's or the isolated interpreter's: they share one
// shape) into the RunResult a caller sees, trusting nothing about the engine's JSON beyond what
// callers read.

import type { CheckOutcome, Verdict } from '../model/types';
import type { RunFailure, RunnerReply, RunResult } from './jobTypes';

const VERDICTS: ReadonlySet<Verdict> = new Set(['pass', 'mismatch', 'inconclusive', 'error']);

/** Parses the engine's JSON; undefined when it is not an outcome. */
export function parseOutcome(json: string): CheckOutcome | undefined {
  try {
    const value: unknown = JSON.parse(json);
    if (typeof value !== 'object' || value === null) return undefined;
    const o = value as Partial<CheckOutcome>;
    if (typeof o.verdict !== 'string' || !VERDICTS.has(o.verdict)) return undefined;
    if (!Array.isArray(o.params) || typeof o.message !== 'string') return undefined;
    return value as CheckOutcome;
  } catch {
    return undefined;
  }
}

/** The RunResult of one runner reply. */
export function runResultFromReply(reply: RunnerReply): RunResult {
  const { output, elapsedMs } = reply;
  if (reply.ok) {
    const outcome = parseOutcome(reply.outcomeJson);
    if (outcome && reply.coverage) return { outcome, output, elapsedMs, coverage: reply.coverage };
    return outcome ? { outcome, output, elapsedMs } : { error: 'the check returned malformed data', output, elapsedMs, cause: 'runner' };
  }
  const result: RunFailure = {
    error: reply.error,
    output,
    elapsedMs,
    cause: reply.duringLoad ? 'load' : reply.timedOut ? 'timeout' : 'runner',
  };
  if (reply.bundleFrames && reply.bundleFrames.length > 0) result.bundleFrames = reply.bundleFrames;
  return result;
}
