// Turns a runner's answer (the process runner's or the isolated interpreter's: they share one
// shape) into the RunResult a caller sees, trusting nothing about the engine's JSON beyond what
// callers read.

import type { CheckOutcome, Verdict } from '../engine/types';
import type { RunResult } from './pool';
import type { BlockCoverage } from './protocol';

const VERDICTS: ReadonlySet<Verdict> = new Set(['pass', 'mismatch', 'inconclusive', 'error']);

/** What both kinds of runner send back for one job. */
export type RunnerReply = (
  | { ok: true; outcomeJson: string; coverage?: BlockCoverage }
  | { ok: false; error: string; timedOut: boolean; duringLoad: boolean; bundleFrames?: Array<{ line: number; column: number }> }
) & { output: string; elapsedMs: number };

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
    return outcome
      ? { outcome, output, elapsedMs }
      : { error: 'the check returned malformed data', output, elapsedMs, cause: 'runner' };
  }
  const result: Extract<RunResult, { error: string }> = {
    error: reply.error, output, elapsedMs,
    cause: reply.duringLoad ? 'load' : reply.timedOut ? 'timeout' : 'runner',
  };
  if (reply.bundleFrames && reply.bundleFrames.length > 0) result.bundleFrames = reply.bundleFrames;
  return result;
}
