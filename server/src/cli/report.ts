// Assembles the version-1 report from the Checker's results (paths relative to the current
// folder, stable order, counts) and decides the exit code. Shared by every output format.

import { isAbsolute, relative } from 'node:path';
import type { OpResult, Report, ReportSummary, Verdict } from '../model/types';
import { toSlashes } from '../project/paths';

/** Verdicts in the order summaries list them. */
export const VERDICTS: readonly Verdict[] = ['pass', 'mismatch', 'inconclusive', 'error'];

/** Builds the report: `file` relative to `cwd` with `/`, pairs ordered by file, line, name. */
export function buildReport(results: readonly OpResult[], cwd: string): Report {
  const pairs = results.map((r) =>
    inReadingOrder({
      ...r,
      file: reportPath(r.file, cwd),
      ...(r.thrownAt ? { thrownAt: { ...r.thrownAt, file: reportPath(r.thrownAt.file, cwd) } } : {}),
      ...coverageWithPaths(r, cwd),
    }),
  );
  pairs.sort((a, b) => compare(a.file, b.file) || a.line - b.line || compare(a.forward ?? '', b.forward ?? ''));
  return { version: 1, pairs, summary: summarize(pairs) };
}

/** The op's coverage with its gaps' files relative to `cwd`, like the op's own file. */
function coverageWithPaths(r: OpResult, cwd: string): Pick<OpResult, 'coverage'> {
  const c = r.coverage;
  if (!c) return {};
  if (!c.collected) return { coverage: c };
  return { coverage: { ...c, gaps: c.gaps.map((g) => ({ ...g, file: reportPath(g.file, cwd) })) } };
}

/** Keys a reader looks for first (the interface's example order); the rest follow as they came. */
const LEADING_KEYS = ['file', 'line', 'forward', 'backward', 'verdict', 'seed', 'elapsedMs', 'message', 'hints', 'params', 'problems'] as const;

function inReadingOrder(pair: OpResult): OpResult {
  const ordered: Record<string, unknown> = {};
  for (const key of LEADING_KEYS) if (pair[key] !== undefined) ordered[key] = pair[key];
  for (const [key, value] of Object.entries(pair)) if (!(key in ordered)) ordered[key] = value;
  return ordered as unknown as OpResult;
}

/** Counts of each verdict. */
export function summarize(pairs: readonly Pick<OpResult, 'verdict'>[]): ReportSummary {
  const summary: ReportSummary = { pass: 0, mismatch: 0, inconclusive: 0, error: 0 };
  for (const pair of pairs) summary[pair.verdict] += 1;
  return summary;
}

/** Which results fail a run besides `mismatch` and `error` (the CLI's flags). */
export interface FailPolicy {
  /** `--fail-on-inconclusive`: every inconclusive op fails the run. */
  failOnInconclusive?: boolean;
  /**
   * `--allow-unfinished`: an op whose check the time limit stopped before it compared every
   * element stays inconclusive without failing the run. By default it fails the run: its
   * unchecked elements may hold the bug.
   */
  allowUnfinished?: boolean;
}

/** Whether a result makes the run fail. */
export function isFailing(pair: Pick<OpResult, 'verdict' | 'stoppedAtTimeLimit'>, policy: FailPolicy = {}): boolean {
  if (pair.verdict === 'mismatch' || pair.verdict === 'error') return true;
  if (pair.verdict !== 'inconclusive') return false;
  return policy.failOnInconclusive === true || (isUnfinished(pair) && policy.allowUnfinished !== true);
}

/** Whether the time limit stopped the op's check before it compared every element. */
export function isUnfinished(pair: Pick<OpResult, 'verdict' | 'stoppedAtTimeLimit'>): boolean {
  return pair.verdict === 'inconclusive' && pair.stoppedAtTimeLimit !== undefined;
}

/** 0 when no op failed, 1 when any did (the interface's exit codes; 2 is decided by the caller). */
export function exitCodeFor(report: Report, policy: FailPolicy = {}): 0 | 1 {
  return report.pairs.some((p) => isFailing(p, policy)) ? 1 : 0;
}

/** A path as reports show it: relative to `cwd` with `/`; absolute only on another drive. */
export function reportPath(file: string, cwd: string): string {
  if (!isAbsolute(file)) return toSlashes(file);
  const rel = relative(cwd, file);
  return isAbsolute(rel) ? toSlashes(file) : toSlashes(rel);
}

function compare(a: string, b: string): number {
  return a < b ? -1 : a > b ? 1 : 0;
}
