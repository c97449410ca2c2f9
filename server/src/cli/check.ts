// `gradient-probe check`: configuration, file walk, one Checker for all files (always
// disposed), then the report in the requested formats and the exit code.

import { setMaxListeners } from 'node:events';
import { statSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import { dirname, resolve } from 'node:path';
import { Checker } from '../core/checker';
import type { CheckSettings } from '../engine/settings';
import type { OpResult, ReportRun } from '../model/types';
import { ConfigError, loadConfigFile, loadProjectConfig, type ProjectConfig } from '../project/config';
import { findSourceFiles, newWalkStats, SourcePathError } from '../project/files';
import type { CheckOptions } from './args';
import { ChangedSinceError, changedFilesSince, inputsChanged, type ChangedFiles } from './changed';
import { nothingCheckedReason, type SkipTally } from './nothingChecked';
import { emitReport, failPolicyOf } from './output';
import { backwardHasGaps } from './coverageLines';
import { buildReport, exitCodeFor, reportPath } from './report';
import { inShard } from './shard';

/** Where the command reads and writes; process globals in production, the same in tests. */
export interface CliIo {
  cwd: string;
  env: Record<string, string | undefined>;
  stdout: { write(text: string): unknown; isTTY?: boolean };
  stderr: { write(text: string): unknown; isTTY?: boolean };
  /** Aborted on Ctrl-C: running checks stop and runners are disposed. */
  signal?: AbortSignal;
}

/** Exit codes (README, "Command line"; docs/report-format.md); 2 also ends a run that checked nothing (the message says why). */
export const EXIT_OK = 0;
export const EXIT_FAILED = 1;
export const EXIT_USAGE = 2;

/** Runs `check`; resolves with the exit code. Never throws. */
export async function runCheckCommand(options: CheckOptions, io: CliIo, toolVersion: string): Promise<number> {
  const started = performance.now();
  let config: ProjectConfig;
  let files: string[];
  const walk = newWalkStats();
  let changed: ChangedFiles | undefined;
  try {
    config = loadConfig(options, io.cwd);
    files = findSourceFiles(options.paths, config, io.cwd, walk);
    if (options.changedSince !== undefined) changed = changedFilesSince(options.changedSince, io.cwd);
  } catch (err) {
    if (err instanceof ConfigError || err instanceof SourcePathError || err instanceof ChangedSinceError) {
      io.stderr.write(`gradient-probe: ${err.message}\n`);
      return EXIT_USAGE;
    }
    throw err;
  }
  const configLabel = config.file === undefined ? undefined : reportPath(config.file, io.cwd);
  const notes: string[] = [configLabel === undefined ? 'no configuration file found; built-in defaults and flags apply' : `configuration file: ${configLabel}`];
  // A changed configuration may change every verdict: then every op counts as changed.
  const configChanged = changed !== undefined && config.file !== undefined && inputsChanged(changed, [config.file]);

  const skipped: SkipTally = { filter: 0, select: 0, unchanged: 0 };
  const scope: RunScope = { skipped };
  if (options.shard) {
    const shard = options.shard;
    scope.select = (file, forward) => inShard(shard, reportPath(file, io.cwd), forward);
  }
  if (changed !== undefined && !configChanged) {
    const since = changed;
    scope.inputsChanged = (inputs) => inputsChanged(since, inputs);
  }

  const settings: CheckSettings = options.isolated ? { ...config.settings, isolation: 'interpreter' } : config.settings;
  let results: OpResult[];
  try {
    results = await checkAll(files, settings, options, io, scope);
  } catch (err) {
    io.stderr.write(`gradient-probe: the checker failed: ${errorText(err)}\n`);
    return EXIT_FAILED;
  }
  if (io.signal?.aborted) {
    io.stderr.write('gradient-probe: interrupted\n');
    return EXIT_FAILED;
  }
  // A file-level entry (no op found, e.g. a syntax error) belongs to one shard like an op.
  if (scope.select) results = results.filter((r) => r.forward !== null || scope.select!(r.file, null));
  const report = buildReport(results, io.cwd);
  report.run = runRecord(options, settings, configLabel, files.length, skipped, toolVersion);
  if (options.shard)
    notes.push(`shard ${options.shard.index}/${options.shard.count}: ${count(report.pairs.length, 'entry', 'entries')} here, ${count(skipped.select, 'op')} in the other shards`);
  if (options.changedSince !== undefined) {
    notes.push(
      configChanged
        ? `--changed-since ${options.changedSince}: the configuration file changed, so every op is checked`
        : `--changed-since ${options.changedSince}: ${count(skipped.unchanged, 'op')} skipped (neither their file nor a file they import changed)`,
    );
  }
  const emptyReason =
    report.pairs.length === 0
      ? nothingCheckedReason({
          paths: options.paths,
          files: files.length,
          stats: walk,
          config,
          configLabel,
          skipped,
          ...(options.filter !== undefined ? { filter: options.filter } : {}),
        })
      : undefined;
  if (emptyReason !== undefined) io.stderr.write(`gradient-probe: nothing was checked: ${emptyReason}\n`);

  const written = emitReport(report, options, io, toolVersion, { fileCount: files.length, elapsedMs: performance.now() - started, notes });
  if (!written || emptyReason !== undefined) return EXIT_USAGE;
  if (options.failOnUnreached && report.pairs.some(backwardHasGaps)) return EXIT_FAILED;
  return exitCodeFor(report, failPolicyOf(options));
}

/** The run's record in the report: what `merge` compares, and this run's part of the work. */
function runRecord(options: CheckOptions, settings: CheckSettings, configLabel: string | undefined, files: number, skipped: SkipTally, toolVersion: string): ReportRun {
  const run: ReportRun = { tool: toolVersion, settings: { ...settings }, config: configLabel ?? null, files };
  if (options.filter !== undefined) run.filter = options.filter;
  if (options.shard) run.shard = { ...options.shard };
  if (options.changedSince !== undefined) run.changedSince = { ref: options.changedSince, skipped: skipped.unchanged };
  return run;
}

function count(n: number, one: string, many = `${one}s`): string {
  return `${n} ${n === 1 ? one : many}`;
}

/** `--config FILE`, else the nearest gradient-probe.json above the first PATH (or the current folder). */
function loadConfig(options: CheckOptions, cwd: string): ProjectConfig {
  if (options.config !== undefined) return loadConfigFile(resolve(cwd, options.config), options.overrides);
  return loadProjectConfig(configSearchStart(options.paths, cwd), options.overrides);
}

function configSearchStart(paths: readonly string[], cwd: string): string {
  const first = paths[0];
  if (first === undefined) return cwd;
  const abs = resolve(cwd, first);
  try {
    return statSync(abs).isDirectory() ? abs : dirname(abs);
  } catch {
    return cwd; // the walk reports the missing path
  }
}

/** What part of the ops a run checks (--shard, --changed-since) and what it left out. */
interface RunScope {
  select?: (file: string, forward: string | null) => boolean;
  inputsChanged?: (inputs: readonly string[]) => boolean;
  skipped: SkipTally;
}

/**
 * Checks every file through one Checker. Several files are in flight at once so the runner
 * pool stays busy while the next file is parsed and bundled; results keep no order here
 * (the report sorts them).
 */
async function checkAll(files: readonly string[], settings: CheckSettings, options: CheckOptions, io: CliIo, scope: RunScope): Promise<OpResult[]> {
  // Coverage is on unless asked off; the isolated interpreter does not record it (checker.ts).
  const checkerOptions: ConstructorParameters<typeof Checker>[0] = { settings, coverage: options.noCoverage !== true };
  if (options.workers !== undefined) checkerOptions.workers = options.workers;
  const checker = new Checker(checkerOptions);
  const results: OpResult[] = [];
  const progress = new Progress(io, files.length);
  try {
    const inFlight = (options.workers ?? availableParallelism()) + 1;
    // Each file in flight listens on the interrupt signal until it is done.
    if (io.signal) setMaxListeners(Math.max(10, inFlight + 1), io.signal);
    let next = 0;
    const lane = async (): Promise<void> => {
      while (next < files.length && !io.signal?.aborted) {
        const file = files[next++]!;
        progress.starting(reportPath(file, io.cwd));
        results.push(...(await checkOneFile(checker, file, settings, options, io.signal, scope)));
        progress.finished();
      }
    };
    await Promise.all(Array.from({ length: Math.min(inFlight, files.length) }, lane));
  } finally {
    progress.clear();
    await checker.dispose();
  }
  return results;
}

/** One file's results; a failure of the Checker itself becomes that file's `error` entry. */
async function checkOneFile(checker: Checker, file: string, settings: CheckSettings, options: CheckOptions, signal: AbortSignal | undefined, scope: RunScope): Promise<OpResult[]> {
  const started = performance.now();
  try {
    const opts: Parameters<Checker['checkFile']>[1] = {
      onSkipped: (n, by) => {
        scope.skipped[by] += n;
      },
    };
    if (options.filter !== undefined) opts.filter = options.filter;
    if (signal !== undefined) opts.signal = signal;
    const select = scope.select;
    if (select) opts.select = (op) => select(file, op.forward);
    if (scope.inputsChanged) opts.inputsChanged = scope.inputsChanged;
    return await checker.checkFile(file, opts);
  } catch (err) {
    if (signal?.aborted) return [];
    return [
      {
        file,
        line: 1,
        forward: null,
        backward: null,
        verdict: 'error',
        seed: settings.seed,
        message: `could not check this file: ${errorText(err)}`,
        failure: 'internal',
        hints: [],
        params: [],
        calls: { forward: 0, backward: 0 },
        elapsedMs: performance.now() - started,
      },
    ];
  }
}

/** A one-line "checking" status on an interactive stderr; silent otherwise (CI logs stay clean). */
class Progress {
  private done = 0;
  private readonly live: boolean;
  constructor(
    private readonly io: CliIo,
    private readonly total: number,
  ) {
    this.live = io.stderr.isTTY === true && total > 1;
  }
  starting(file: string): void {
    if (this.live) this.io.stderr.write(`\r\x1b[Kchecking ${this.done}/${this.total} files: ${file}`);
  }
  finished(): void {
    this.done++;
  }
  clear(): void {
    if (this.live) this.io.stderr.write('\r\x1b[K');
  }
}

function errorText(err: unknown): string {
  return err instanceof Error ? err.message : String(err);
}
