// Builds the report entry (OpResult) of one op from what happened to it: an engine outcome,
// or a failure before or during its run (annotation problem, syntax error, bundle failure,
// timeout, crash). One place, so every path fills the same fields.
import type { CheckSettings } from '../engine/settings';
import type { CheckOutcome, FailureKind, OpDescriptor, OpResult, Problem } from '../model/types';
import type { RunFailureCause } from '../sandbox/jobTypes';

/**
 * The head of an error message whose problems are its detail (listed with their places): the
 * Checker writes "HEAD: first problem (line L, column C)", and a reader that lists the problems
 * itself (the CLI) shows the head alone. One wording for both.
 */
export const FAILURE_HEADS = {
  annotation: 'annotation problem',
  syntax: 'the file has a syntax error, so none of its ops can run',
  bundle: 'the module could not be bundled',
} as const satisfies Partial<Record<FailureKind, string>>;

/** The result of an op whose check produced an outcome. */
export function resultFromOutcome(file: string, op: OpDescriptor, outcome: CheckOutcome, elapsedMs: number, output: string): OpResult {
  const result: OpResult = {
    ...outcome,
    file,
    line: op.line,
    forward: op.forward,
    backward: op.backward,
    elapsedMs,
  };
  if (op.kind !== undefined) result.kind = op.kind;
  if (output) result.output = output;
  return result;
}

/** The result of an op that could not be checked; `op` is null for a file-level failure with no op found. */
export function errorResult(
  file: string,
  op: OpDescriptor | null,
  settings: CheckSettings,
  failure: FailureKind,
  message: string,
  extra: { line?: number; problems?: Problem[]; elapsedMs?: number; output?: string } = {},
): OpResult {
  const result: OpResult = {
    verdict: 'error',
    seed: op?.seed ?? settings.seed,
    message,
    failure,
    hints: [],
    params: [],
    calls: { forward: 0, backward: 0 },
    file,
    line: op?.line ?? extra.line ?? 1,
    forward: op?.forward ?? null,
    backward: op?.backward ?? null,
    elapsedMs: extra.elapsedMs ?? 0,
  };
  if (op?.kind !== undefined) result.kind = op.kind;
  if (extra.problems && extra.problems.length > 0) result.problems = extra.problems;
  if (extra.output) result.output = extra.output;
  return result;
}

/** "first message (line L, column C)" plus how many more, for a list of problems. */
export function summarizeProblems(problems: Problem[]): string {
  const first = problems[0];
  if (!first) return '';
  const more = problems.length > 1 ? `; ${problems.length - 1} more problem${problems.length > 2 ? 's' : ''}` : '';
  return `${first.message} (line ${first.line}, column ${first.column})${more}`;
}

/** What a runner's failure cause means for the op (the Checker explains a `cancelled` by what stopped the file). */
export function failureOfCause(cause: RunFailureCause): FailureKind {
  switch (cause) {
    case 'timeout':
      return 'timed-out';
    case 'crash':
      return 'runner-crashed';
    case 'memory':
      return 'memory-limit';
    case 'load':
      return 'load';
    case 'runner':
      return 'runner';
    case 'closed':
    case 'cancelled':
      return 'cancelled';
  }
}
