// `gradient-probe merge REPORT.json ...`: joins the JSON reports of several `check` runs (the
// shards of a CI matrix) into one report and one exit code. Refuses reports of unlike runs
// (tool version, settings, configuration, filter) and a shard given twice or missing, since
// the joined verdict would then not be the verdict of one run.

import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import type { OpResult, Report, ReportRun } from '../model/types';
import type { CheckOptions } from './args';
import { EXIT_USAGE } from './check';
import { emitReport, failPolicyOf, type OutputIo } from './output';
import { buildReport, exitCodeFor } from './report';

/** A report that cannot be joined; the message names the file and the difference. */
export class MergeError extends Error {}

interface Loaded {
  name: string;
  report: Report & { run: ReportRun };
}

/** Runs `merge`; resolves with the exit code. */
export function runMergeCommand(options: CheckOptions, io: OutputIo, toolVersion: string): number {
  let merged: Report & { run: ReportRun };
  try {
    merged = mergeReports(options.paths.map((p) => loadReport(p, io.cwd)));
  } catch (err) {
    if (!(err instanceof MergeError)) throw err;
    io.stderr.write(`gradient-probe merge: ${err.message}\n`);
    return EXIT_USAGE;
  }
  const notes = [
    merged.run.config === null ? 'no configuration file was found by the joined runs' : `configuration file: ${merged.run.config}`,
    `joined ${options.paths.length} report${options.paths.length === 1 ? '' : 's'}`,
  ];
  const empty = merged.pairs.length === 0 && (merged.run.changedSince?.skipped ?? 0) === 0;
  if (empty) io.stderr.write('gradient-probe merge: nothing was checked: the joined reports hold no op\n');
  const written = emitReport(merged, options, io, toolVersion, { fileCount: merged.run.files, notes });
  if (!written || empty) return EXIT_USAGE;
  return exitCodeFor(merged, failPolicyOf(options));
}

/** Joins loaded reports: pairs in report order, counts recomputed, the shards' record folded into one. */
export function mergeReports(reports: readonly Loaded[]): Report & { run: ReportRun } {
  const first = reports[0];
  if (first === undefined) throw new MergeError('no report to join');
  for (const other of reports.slice(1)) {
    const difference = runDifference(first.report.run, other.report.run);
    if (difference !== undefined) {
      throw new MergeError(`${other.name} and ${first.name} come from different runs (${difference}); only reports of one run's shards can be joined`);
    }
  }
  checkShards(reports);
  const seen = new Map<string, string>();
  const pairs: OpResult[] = [];
  for (const { name, report } of reports) {
    for (const pair of report.pairs) {
      const key = `${pair.file}\0${pair.line}\0${pair.forward ?? ''}\0${pair.kind ?? 'backward'}`;
      const before = seen.get(key);
      if (before !== undefined) {
        throw new MergeError(`${pair.forward ?? '(file)'} in ${pair.file}:${pair.line} is in both ${before} and ${name}: the reports overlap`);
      }
      seen.set(key, name);
      pairs.push(pair);
    }
  }
  // buildReport sorts as `check` does; paths are already relative, so they stay as they are.
  const joined = buildReport(pairs, '');
  const run: ReportRun = { ...first.report.run };
  delete run.shard;
  if (first.report.run.changedSince) {
    run.changedSince = { ref: first.report.run.changedSince.ref, skipped: 0 };
    for (const { report } of reports) run.changedSince.skipped += report.run.changedSince?.skipped ?? 0;
  }
  return { ...joined, run };
}

function loadReport(path: string, cwd: string): Loaded {
  let parsed: unknown;
  try {
    parsed = JSON.parse(readFileSync(resolve(cwd, path), 'utf8'));
  } catch (err) {
    throw new MergeError(`${path}: not a readable JSON report (${err instanceof Error ? err.message : String(err)})`);
  }
  const report = parsed as Partial<Report>;
  if (typeof parsed !== 'object' || parsed === null || report.version !== 1 || !Array.isArray(report.pairs)) {
    throw new MergeError(`${path}: not a version-1 report of gradient-probe check --json`);
  }
  if (typeof report.run !== 'object' || report.run === null || typeof report.run.tool !== 'string') {
    throw new MergeError(`${path}: the report has no "run" record (what it was checked with), so it cannot be joined safely; write it with this version's check --json`);
  }
  return { name: path, report: report as Report & { run: ReportRun } };
}

/** The first way two runs differ that changes what a verdict means, or undefined. */
function runDifference(a: ReportRun, b: ReportRun): string | undefined {
  if (a.tool !== b.tool) return `gradient-probe ${b.tool} against ${a.tool}`;
  const keys = new Set([...Object.keys(a.settings), ...Object.keys(b.settings)]);
  for (const key of [...keys].sort()) {
    const x = JSON.stringify(a.settings[key]);
    const y = JSON.stringify(b.settings[key]);
    if (x !== y) return `setting ${key} is ${y ?? 'unset'} against ${x ?? 'unset'}${key === 'seed' ? ': a different seed draws different inputs' : ''}`;
  }
  if (a.config !== b.config) return `configuration file ${b.config ?? 'none'} against ${a.config ?? 'none'}`;
  if (a.filter !== b.filter) return `--filter ${JSON.stringify(b.filter ?? null)} against ${JSON.stringify(a.filter ?? null)}`;
  if (a.changedSince?.ref !== b.changedSince?.ref) return `--changed-since ${b.changedSince?.ref ?? '(none)'} against ${a.changedSince?.ref ?? '(none)'}`;
  if (a.files !== b.files) return `${b.files} source files against ${a.files}: different paths or trees`;
  return undefined;
}

/** Shards must share N, appear once each, and all be there; unsharded reports must stand alone. */
function checkShards(reports: readonly Loaded[]): void {
  const sharded = reports.filter((r) => r.report.run.shard !== undefined);
  if (sharded.length === 0) {
    if (reports.length > 1) throw new MergeError(`${reports[1]!.name} and ${reports[0]!.name} are both whole runs (no --shard): joining them would count every op twice`);
    return;
  }
  if (sharded.length !== reports.length) {
    const whole = reports.find((r) => r.report.run.shard === undefined)!;
    throw new MergeError(`${whole.name} is a whole run (no --shard) and cannot be joined with shards`);
  }
  const count = sharded[0]!.report.run.shard!.count;
  const byIndex = new Map<number, string>();
  for (const { name, report } of sharded) {
    const shard = report.run.shard!;
    if (shard.count !== count) throw new MergeError(`${name} is shard ${shard.index}/${shard.count}, but ${sharded[0]!.name} is one of ${count}`);
    const twice = byIndex.get(shard.index);
    if (twice !== undefined) throw new MergeError(`${name} and ${twice} are both shard ${shard.index}/${count}`);
    byIndex.set(shard.index, name);
  }
  const missing: number[] = [];
  for (let k = 1; k <= count; k++) if (!byIndex.has(k)) missing.push(k);
  if (missing.length > 0) {
    throw new MergeError(
      `shard${missing.length === 1 ? '' : 's'} ${missing.map((k) => `${k}/${count}`).join(', ')} missing: a joined report without ${missing.length === 1 ? 'it' : 'them'} would leave ops unchecked`,
    );
  }
}
