// Handlers behind the commands and the per-op requests: re-check (the code lens), check the
// ops of a file (Testing view, "check this file"), an op's report data, and the regression-test
// snippet. Each answers with a reason instead of failing when nothing can be done.

import { DEFAULT_SETTINGS } from '../engine/settings';
import type { OpDescriptor, OpResult } from '../model/types';
import { CheckRefused } from './checkService';
import { opStanding } from './opStanding';
import type { CheckOpsParams, CheckOpsResult, OpReportParams, OpReportResult, RegressionTestResult } from './protocol';
import { withPassingPicture } from './reportPictures';
import { regressionTestFor } from './regressionTest';
import type { Session } from './session';

export async function checkOps(session: Session, params: CheckOpsParams, signal: AbortSignal): Promise<CheckOpsResult> {
  const key = session.keyOf(params.uri);
  try {
    const results = await session.check(key, {
      ...(params.forwards ? { forwards: params.forwards } : {}),
      ...(params.force !== undefined ? { force: params.force } : {}),
      signal,
    });
    // The op states go out before the answer, so the client sees them in that order.
    await session.pushNow();
    return { results };
  } catch (err) {
    if (err instanceof CheckRefused) return { results: [], reason: err.message, reasonCode: err.code };
    throw err;
  }
}

/** `workspace/executeCommand` of ServerCommands.recheck: args [uri, forward?]. */
export async function recheck(session: Session, args: unknown[] | undefined): Promise<CheckOpsResult> {
  const [uri, forward] = args ?? [];
  if (typeof uri !== 'string') return { results: [], reason: 're-check needs the document URI as its first argument', reasonCode: 'bad-request' };
  const params: CheckOpsParams = { uri, force: true, ...(typeof forward === 'string' ? { forwards: [forward] } : {}) };
  return checkOps(session, params, new AbortController().signal);
}

/**
 * The report page's data: the op's latest result, re-checked first with the step picture of a
 * passing parameter when that result has none (reportPictures.ts).
 */
export async function opReport(session: Session, params: OpReportParams, signal?: AbortSignal): Promise<OpReportResult> {
  const key = session.keyOf(params.uri);
  const facts = await session.facts(key);
  const op = facts?.snapshot.ops.find((o) => o.forward === params.forward);
  if (!facts || !op) return { result: null, reason: `no annotated op named ${params.forward} in this file`, reasonCode: 'unknown-op' };
  const latest = facts.latest(op.forward);
  if (latest) {
    const result = await withPassingPicture(session, key, op, latest, facts, signal);
    return { result, tolerance: await toleranceOf(session, key, op, result) };
  }
  const standing = opStanding(op, facts);
  if (!standing.may) return { result: null, reason: standing.reason, reasonCode: standing.code };
  return { result: null, reason: `${op.forward} has not been checked yet`, reasonCode: 'not-checked' };
}

export async function regressionTest(session: Session, params: OpReportParams): Promise<RegressionTestResult> {
  const key = session.keyOf(params.uri);
  const facts = await session.facts(key);
  const op = facts?.snapshot.ops.find((o) => o.forward === params.forward);
  const result = facts?.latest(params.forward);
  if (!op || !result) {
    const why = await opReport(session, params);
    return { snippet: null, reason: why.reason ?? 'no result', ...(why.reasonCode ? { reasonCode: why.reasonCode } : {}) };
  }
  const outcome = regressionTestFor(op, result);
  return 'snippet' in outcome ? { snippet: outcome.snippet } : { snippet: null, reason: outcome.reason, reasonCode: 'no-failing-case' };
}

/**
 * The relative tolerance an op was judged with, for the report page's line: the engine's own
 * (ParamResult.tolerance, the same for every parameter of an op). Results without one (a check
 * stopped before it chose) fall back to the op's @tolerance or the float64 setting.
 */
async function toleranceOf(session: Session, key: string, op: OpDescriptor, result: OpResult): Promise<number> {
  const applied = result.params.find((p) => p.tolerance !== undefined)?.tolerance;
  if (applied !== undefined) return applied;
  const settings = (await session.effectiveSettings(key)).settings ?? DEFAULT_SETTINGS;
  return op.tolerance ?? settings.toleranceF64;
}
