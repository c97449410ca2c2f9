// The explanation of an op that did not pass, as plain lines: message, annotation problems
// with file:line:column, per-parameter evidence and hints, seed, captured console output.

import { FAILURE_HEADS } from '../core/opResult';
import type { FailureKind, OpResult, ParamResult, TimeLimitStop } from '../model/types';
import { elementName, formatNumber, formatRelError } from '../present/format';
import { stripControl } from './format';

/** Lines of captured console output shown before the rest is cut. */
const MAX_OUTPUT_LINES = 12;

/** Explanation lines for one op; none for a pass. `withOutput: false` leaves the console output out. */
export function detailLines(pair: OpResult, { withOutput = true }: { withOutput?: boolean } = {}): string[] {
  if (pair.verdict === 'pass') return [];
  const out: string[] = [];
  const problems = pair.problems ?? [];
  const message = headOfListedFailure(pair) ?? pair.message;
  if (message) out.push(...message.split('\n'));
  if (pair.thrownAt) out.push(`thrown at ${pair.thrownAt.file}:${pair.thrownAt.line}:${pair.thrownAt.column}`);
  for (const problem of problems) out.push(`${pair.file}:${problem.line}:${problem.column}: ${problem.message}`);
  // The engine's message already states each failing parameter's worst element; without one,
  // each failing parameter gets its own line of evidence.
  const failing = pair.params.filter((p) => p.verdict !== 'pass');
  const perParamLines = !message;
  for (const param of failing) {
    if (perParamLines) out.push(paramLine(param));
    for (const hint of param.hints) out.push(`${perParamLines ? '  ' : ''}hint: ${hint}`);
  }
  for (const hint of pair.hints) out.push(`hint: ${hint}`);
  const stop = pair.stoppedAtTimeLimit;
  if (stop !== undefined) out.push(timeLimitLine(stop));
  // An annotation error never ran, so its seed explains nothing.
  if (problems.length === 0) out.push(`seed ${pair.seed}`);
  if (withOutput) out.push(...outputLines(pair.output));
  return out;
}

/**
 * For a failure whose problems are listed below it with their exact places (annotation, syntax,
 * bundle): the message's head alone, from the failure kind (a report without one shows the message whole).
 */
function headOfListedFailure(pair: OpResult): string | undefined {
  if (pair.failure === undefined || (pair.problems ?? []).length === 0) return undefined;
  return (FAILURE_HEADS as Partial<Record<FailureKind, string>>)[pair.failure];
}

/** One parameter's evidence: errors and the worst element's two values. */
export function paramLine(param: ParamResult): string {
  // The detection floor: the smallest single-element relative error this check catches (p ≥ 0.99).
  const floor = typeof param.detectionFloor === 'number' ? `, detection floor ${formatRelError(param.detectionFloor)}` : '';
  const head = `${param.name} (${param.verdict}): max rel error ${formatRelError(param.maxRelError)}, max abs error ${formatNumber(param.maxAbsError)}${floor}`;
  if (!param.worst) return head;
  const w = param.worst;
  const where = elementName(param.name, w.index);
  const own = w.relError !== undefined ? ` (relative error ${formatRelError(w.relError)})` : '';
  return `${head}; at ${where}${own} backward gives ${formatNumber(w.analytic)}, finite differences ${formatNumber(w.numeric)}`;
}

function outputLines(output: string | undefined): string[] {
  const text = (output ?? '').replace(/\s+$/, '');
  if (text === '') return [];
  const lines = text.split('\n');
  const out = ['console output:', ...lines.slice(0, MAX_OUTPUT_LINES).map((l) => `  | ${stripControl(l)}`)];
  if (lines.length > MAX_OUTPUT_LINES) out.push(`  | ... ${lines.length - MAX_OUTPUT_LINES} more lines (in the --json report)`);
  return out;
}

/** How far a check got before its time limit, and which limit to raise. */
export function timeLimitLine(stop: TimeLimitStop): string {
  const got = stop.stage === 'forward calls' ? `${stop.done} calls of the op` : `${stop.done} of ${stop.total} ${stop.stage}`;
  return (
    `not finished: the time limit of ${stop.timeLimitMs} ms stopped the check of '${stop.param}' after ${got}; ` +
    'an unfinished check fails the run (unless --allow-unfinished): raise the limit with --time-limit MS or "timeLimitMs" in gradient-probe.json'
  );
}
