// What the CLI says about coverage: one line per code gap of an op ("never reached during the
// check: …"), the hint of which sample range would reach it, and whether a backward has gaps
// (for --fail-on-unreached).

import type { CoverageGap, OpResult, Report } from '../model/types';

/** Gap lines shown per op before the rest is left to the --json report. */
const MAX_GAP_LINES = 8;

/** `ops.ts:42–45` (or `ops.ts:42` for one line). */
export function gapPlace(gap: CoverageGap): string {
  const lines = gap.endLine > gap.startLine ? `${gap.startLine}–${gap.endLine}` : `${gap.startLine}`;
  return `${gap.file}:${lines}`;
}

/** One sentence per gap: where, in which function, what code. */
export function gapSentence(gap: CoverageGap): string {
  return `never reached during the check: ${gapPlace(gap)} in \`${gap.function}\` (${gap.what})`;
}

/** The coverage lines under an op's row; none when coverage was not collected or everything ran. */
export function coverageLines(pair: OpResult): string[] {
  const c = pair.coverage;
  if (!c || !c.collected || c.gaps.length === 0) return [];
  const out = [`coverage: backward ${c.backward.run} of ${c.backward.total} blocks ran, forward ${c.forward.run} of ${c.forward.total}`];
  for (const gap of c.gaps.slice(0, MAX_GAP_LINES)) {
    out.push(gapSentence(gap));
    if (gap.reach) out.push(`  ${gap.reach}`);
  }
  if (c.gaps.length > MAX_GAP_LINES) out.push(`... ${c.gaps.length - MAX_GAP_LINES} more gaps (in the --json report)`);
  return out;
}

/** True when code of the op's backward (or of a helper it calls) never ran during its check. */
export function backwardHasGaps(pair: OpResult): boolean {
  const c = pair.coverage;
  return c !== undefined && c.collected && c.gaps.some((g) => g.side !== 'forward');
}

/** One line for ops whose coverage could not be collected, grouped by reason; undefined when there are none. */
export function uncollectedNote(report: Report): string | undefined {
  const byReason = new Map<string, number>();
  for (const pair of report.pairs) {
    if (pair.coverage && !pair.coverage.collected) byReason.set(pair.coverage.reason, (byReason.get(pair.coverage.reason) ?? 0) + 1);
  }
  if (byReason.size === 0) return undefined;
  // The reason is shown whole ("not collected: ..."): the report's own words, never cut apart.
  const parts = [...byReason].map(([reason, n]) => `${n} ${n === 1 ? 'op' : 'ops'} ${reason}`);
  return `coverage: ${parts.join('; ')}`;
}
