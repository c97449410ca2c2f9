// Why a `check` run compared no op at all, in words a CI log can act on. Such a run fails
// (exit 2): a green step that checked nothing would be a false pass. A shard or a
// --changed-since run that holds no op of its own is no failure: the ops exist elsewhere.

import type { ProjectConfig } from '../project/config';
import type { WalkStats } from '../project/files';

/** Ops the Checker left out, by the option that left them out. */
export interface SkipTally {
  filter: number;
  select: number;
  unchanged: number;
}

export interface EmptyRunFacts {
  /** The PATH arguments as typed ([] means the current folder). */
  paths: readonly string[];
  files: number;
  stats: WalkStats;
  config: ProjectConfig;
  /** The configuration file as messages name it. */
  configLabel: string | undefined;
  filter?: string;
  skipped: SkipTally;
}

/** The reason the run checked nothing and must fail, or undefined when it checked an op or had none of its own to check. */
export function nothingCheckedReason(facts: EmptyRunFacts): string | undefined {
  const where = facts.paths.length === 0 ? 'the current folder' : facts.paths.join(', ');
  if (facts.files === 0) {
    if (facts.stats.seen === 0) {
      return `no TypeScript sources (.ts, .tsx, .mts, .cts) under ${where} (node_modules, .git, dist and git-ignored files are skipped)`;
    }
    const why: string[] = [];
    if (facts.stats.notIncluded > 0) {
      why.push(`${count(facts.stats.notIncluded, 'source')} match no "include" glob (${facts.config.include.map((g) => JSON.stringify(g)).join(', ')})`);
    }
    for (const [glob, n] of facts.stats.excluded) {
      const parts = [n.files > 0 ? count(n.files, 'source') : '', n.folders > 0 ? count(n.folders, 'folder') : ''].filter((p) => p !== '');
      why.push(`${parts.join(' and ')} left out by the "exclude" glob ${JSON.stringify(glob)}`);
    }
    return `every TypeScript source under ${where} is left out by ${facts.configLabel ?? 'the configuration file'}: ${why.join('; ')}`;
  }
  const { filter, select, unchanged } = facts.skipped;
  if (select > 0 || unchanged > 0) return undefined;
  if (filter > 0 && facts.filter !== undefined) {
    return `--filter ${JSON.stringify(facts.filter)} matches no op's forward name (the ${count(filter, 'op')} found do not contain it; the match is case-sensitive)`;
  }
  return `no annotated op in the ${count(facts.files, 'TypeScript source')} under ${where}: an op is a function whose JSDoc names its hand-written derivative (@backward NAME)`;
}

function count(n: number, noun: string): string {
  return `${n} ${noun}${n === 1 ? '' : 's'}`;
}
