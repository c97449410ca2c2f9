// `gradient-probe check`: configuration, file walk, one Checker for all files (always
// disposed), then the report in the requested formats and the exit code.

import { mkdirSync, statSync, writeFileSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import { dirname, resolve } from 'node:path';
import { Checker } from '../core/checker';
import type { CheckSettings } from '../engine/settings';
import type { OpResult, Report } from '../engine/types';
import { ConfigError, loadConfigFile, loadProjectConfig, type ProjectConfig } from '../project/config';
import { findSourceFiles, SourcePathError } from '../project/files';
import type { CheckOptions } from './args';
import { backwardHasGaps } from './coverageLines';
import { formatHuman } from './human';
import { formatJunit } from './junit';
import { buildReport, exitCodeFor, reportPath } from './report';
import { formatSarif } from './sarif';
import { shouldUseColor } from './terminal';

/** Where the command reads and writes; process globals in production, the same in tests. */
export interface CliIo {
  cwd: string;
  env: Record<string, string | undefined>;
  stdout: { write(text: string): unknown; isTTY?: boolean };
  stderr: { write(text: string): unknown; isTTY?: boolean };
  /** Aborted on Ctrl-C: running checks stop and runners are disposed. */
  signal?: AbortSignal;
}

/** Exit codes (README, "Command line"; docs/report-format.md). */
export const EXIT_OK = 0;
export const EXIT_FAILED = 1;
export const EXIT_USAGE = 2;

/** Runs `check`; resolves with the exit code. Never throws. */
export async function runCheckCommand(options: CheckOptions, io: CliIo, toolVersion: string): Promise<number> {
  const started = performance.now();
  let config: ProjectConfig;
  let files: string[];
  try {
    config = loadConfig(options, io.cwd);
    files = findSourceFiles(options.paths, config, io.cwd);
  } catch (err) {
    if (err instanceof ConfigError || err instanceof SourcePathError) {
      io.stderr.write(`gradient-probe: ${err.message}\n`);
      return EXIT_USAGE;
    }
    throw err;
  }
  if (files.length === 0) io.stderr.write('gradient-probe: no TypeScript sources found\n');

  let results: OpResult[];
  try {
    const settings: CheckSettings = options.isolated ? { ...config.settings, isolation: 'interpreter' } : config.settings;
    results = await checkAll(files, settings, options, io);
  } catch (err) {
    io.stderr.write(`gradient-probe: the checker failed: ${errorText(err)}\n`);
    return EXIT_FAILED;
  }
  if (io.signal?.aborted) {
    io.stderr.write('gradient-probe: interrupted\n');
    return EXIT_FAILED;
  }
  const report = buildReport(results, io.cwd);
  if (options.filter !== undefined && report.pairs.length === 0 && files.length > 0) {
    // A mistyped filter would otherwise pass a CI run silently.
    io.stderr.write(`gradient-probe: no op's forward name contains "${options.filter}"\n`);
  }
  const elapsedMs = performance.now() - started;

  const written = writeReportFiles(report, options, io, toolVersion);
  if (options.json) {
    io.stdout.write(JSON.stringify(report, null, 2) + '\n');
  } else {
    const color = shouldUseColor(options.color, io.stdout.isTTY === true, io.env);
    io.stdout.write(formatHuman(report, { color, onlyProblems: options.onlyProblems, fileCount: files.length, elapsedMs }));
  }
  if (!written) return EXIT_USAGE;
  if (options.failOnUnreached && report.pairs.some(backwardHasGaps)) return EXIT_FAILED;
  return exitCodeFor(report, options.failOnInconclusive);
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

/**
 * Checks every file through one Checker. Several files are in flight at once so the runner
 * pool stays busy while the next file is parsed and bundled; results keep no order here
 * (the report sorts them).
 */
async function checkAll(files: readonly string[], settings: CheckSettings, options: CheckOptions, io: CliIo): Promise<OpResult[]> {
  // Coverage is on unless asked off; the isolated interpreter does not record it (checker.ts).
  const checkerOptions: ConstructorParameters<typeof Checker>[0] = { settings, coverage: options.noCoverage !== true };
  if (options.workers !== undefined) checkerOptions.workers = options.workers;
  const checker = new Checker(checkerOptions);
  const results: OpResult[] = [];
  const progress = new Progress(io, files.length);
  try {
    const inFlight = (options.workers ?? availableParallelism()) + 1;
    let next = 0;
    const lane = async (): Promise<void> => {
      while (next < files.length && !io.signal?.aborted) {
        const file = files[next++]!;
        progress.starting(reportPath(file, io.cwd));
        results.push(...(await checkOneFile(checker, file, settings, options, io.signal)));
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
async function checkOneFile(
  checker: Checker, file: string, settings: CheckSettings, options: CheckOptions, signal: AbortSignal | undefined,
): Promise<OpResult[]> {
  const started = performance.now();
  try {
    const opts: Parameters<Checker['checkFile']>[1] = {};
    if (options.filter !== undefined) opts.filter = options.filter;
    if (signal !== undefined) opts.signal = signal;
    return await checker.checkFile(file, opts);
  } catch (err) {
    if (signal?.aborted) return [];
    return [{
      file, line: 1, forward: null, backward: null, verdict: 'error', seed: settings.seed,
      message: `could not check this file: ${errorText(err)}`, hints: [], params: [],
      calls: { forward: 0, backward: 0 }, elapsedMs: performance.now() - started,
    }];
  }
}

/** Writes `--sarif` and `--junit` files (creating their folders); false when one could not be written. */
function writeReportFiles(report: Report, options: CheckOptions, io: CliIo, toolVersion: string): boolean {
  const outputs: [string, string | undefined, () => string][] = [
    ['--sarif', options.sarif, () => formatSarif(report, { toolVersion, rootDir: io.cwd })],
    ['--junit', options.junit, () => formatJunit(report, { failOnInconclusive: options.failOnInconclusive })],
  ];
  let ok = true;
  for (const [flag, target, render] of outputs) {
    if (target === undefined) continue;
    const path = resolve(io.cwd, target);
    try {
      mkdirSync(dirname(path), { recursive: true });
      writeFileSync(path, render());
    } catch (err) {
      io.stderr.write(`gradient-probe: ${flag} ${target}: cannot write the file (${errorText(err)})\n`);
      ok = false;
    }
  }
  return ok;
}

/** A one-line "checking" status on an interactive stderr; silent otherwise (CI logs stay clean). */
class Progress {
  private done = 0;
  private readonly live: boolean;
  constructor(private readonly io: CliIo, private readonly total: number) {
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
