// Handlers behind the commands and the per-op requests: re-check (the code lens), check the
// ops of a file (Testing view, "check this file"), an op's report data, and the regression-test
// snippet. Each answers with a reason instead of failing when nothing can be done.

import { DEFAULT_SETTINGS } from '../engine/settings';
import type { OpDescriptor, OpResult } from '../model/types';
import { CheckRefused } from './checkService';
import type { CheckOpsParams, CheckOpsResult, OpReportParams, OpReportResult, RegressionTestResult } from './protocol';
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
    if (err instanceof CheckRefused) return { results: [], reason: err.message };
    throw err;
  }
}

/** `workspace/executeCommand` of ServerCommands.recheck: args [uri, forward?]. */
export async function recheck(session: Session, args: unknown[] | undefined): Promise<CheckOpsResult> {
  const [uri, forward] = args ?? [];
  if (typeof uri !== 'string') return { results: [], reason: 're-check needs the document URI as its first argument' };
  const params: CheckOpsParams = { uri, force: true, ...(typeof forward === 'string' ? { forwards: [forward] } : {}) };
  return checkOps(session, params, new AbortController().signal);
}

export async function opReport(session: Session, params: OpReportParams): Promise<OpReportResult> {
  const key = session.keyOf(params.uri);
  const facts = await session.facts(key);
  const op = facts?.snapshot.ops.find((o) => o.forward === params.forward);
  if (!facts || !op) return { result: null, reason: `no annotated op named ${params.forward} in this file` };
  const result = facts.latest(op.forward);
  if (result) return { result, tolerance: await toleranceOf(session, key, op, result) };
  if (op.problems.length > 0) return { result: null, reason: `${op.forward} has annotation errors; fix them first` };
  if (facts.configError) return { result: null, reason: facts.configError.message };
  if (!facts.trusted && !facts.isolated) return { result: null, reason: 'the workspace is not trusted, so no code from it runs' };
  return { result: null, reason: `${op.forward} has not been checked yet` };
}

export async function regressionTest(session: Session, params: OpReportParams): Promise<RegressionTestResult> {
  const key = session.keyOf(params.uri);
  const facts = await session.facts(key);
  const op = facts?.snapshot.ops.find((o) => o.forward === params.forward);
  const result = facts?.latest(params.forward);
  if (!op || !result) return { snippet: null, reason: (await opReport(session, params)).reason ?? 'no result' };
  const outcome = regressionTestFor(op, result, await toleranceOf(session, key, op, result));
  return 'snippet' in outcome ? { snippet: outcome.snippet } : { snippet: null, reason: outcome.reason };
}

/** The relative tolerance an op is judged with: its @tolerance, else the setting for its element type. */
async function toleranceOf(session: Session, key: string, op: OpDescriptor, result: OpResult): Promise<number> {
  const settings = (await session.effectiveSettings(key)).settings ?? DEFAULT_SETTINGS;
  const f32 = result.params.some((p) => p.dtype === 'f32');
  return op.tolerance ?? (f32 ? settings.toleranceF32 : settings.toleranceF64);
}
