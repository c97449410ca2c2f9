// The Checker: the one orchestration shared by the CLI, the language server and benchmarks.
// discovery → bundle once per file → one sandbox job per op (in parallel across runners) → OpResult.
// Its helpers: opListing.ts (discovery, bindings), discoveryCache.ts (discovery of an unchanged
// text, not parsed again), opResult.ts (report entries, failure kinds), opCoverage.ts (the
// coverage pass's result), sourcePlaces.ts (where user code threw).
import { setMaxListeners } from 'node:events';
import { readFileSync } from 'node:fs';
import { dirname, relative, resolve } from 'node:path';
import type { CheckSettings } from '../engine/settings';
import type { FailureKind, OpDescriptor, OpResult, Problem } from '../model/types';
import { Bundler, type BundleResult, type BundleStats } from '../sandbox/bundle';
import { bundleFramesFrom } from '../sandbox/bundleWrapper';
import type { SourcePlace } from '../sandbox/sourceMap';
import { IsolatedRunner } from '../sandbox/isolated';
import { emptyStats, type RunnerStats } from '../sandbox/jobTypes';
import { RunnerPool, type IsolationReport, type PoolStats, type RunnerPoolOptions } from '../sandbox/pool';
import type { CheckFileOptions } from './checkFileOptions';
import { DiscoveryCache, type DiscoveryCacheStats } from './discoveryCache';
import { coverageOf, INTERPRETER_NO_COVERAGE } from './opCoverage';
import { bindingsOf } from './opListing';
import { errorResult, FAILURE_HEADS, failureOfCause, resultFromOutcome, summarizeProblems } from './opResult';
import { loadErrorPlace, thrownPlace } from './sourcePlaces';

export { bindingsOf, listOps, type OpListing } from './opListing';
export { coverageOf, INTERPRETER_NO_COVERAGE } from './opCoverage';
export type { CheckFileOptions } from './checkFileOptions';

/**
 * A file's checks together may take at most this many times the per-op time limit. A file
 * whose ops all run near the limit is broken somewhere; one save must not occupy the runners
 * for longer than five ops' worst case (our choice, not from a handbook).
 */
export const FILE_TIME_LIMIT_FACTOR = 5;

export interface CheckerOptions {
  settings: CheckSettings;
  /** Runner processes (default min(2, cores)). */
  workers?: number;
  /** Where the built runner and engine are, and a log sink (defaults suit dist/). */
  runner?: Omit<RunnerPoolOptions, 'size'>;
  /**
   * Also record which code of each op's forward and backward its check ran (OpResult.coverage):
   * a second, separate run of the same check in coverage runners (sandbox/coverageSession.ts),
   * after the verdict's run gave a verdict. Default false.
   */
  coverage?: boolean;
}

export interface CheckerStats {
  pool: PoolStats;
  /** The isolated interpreter's counters (all zero until an op runs there). */
  isolated: RunnerStats;
  bundle: BundleStats;
  discovery: DiscoveryCacheStats;
}

export class Checker {
  private readonly settings: CheckSettings;
  private readonly bundler = new Bundler({ diskCache: true });
  /** Discovery by path and text: an unchanged file is not parsed again on every check. */
  private readonly discovery = new DiscoveryCache();
  private readonly pool: RunnerPool;
  private isolated: IsolatedRunner | undefined;
  private readonly runnerLog: ((line: string) => void) | undefined;
  /** Runners of the coverage pass, started on first use (only when coverage is asked for). */
  private coveragePool: RunnerPool | undefined;
  private readonly coverageOptions: RunnerPoolOptions | undefined;

  constructor(opts: CheckerOptions) {
    this.settings = opts.settings;
    this.pool = new RunnerPool({ ...opts.runner, size: opts.workers });
    this.runnerLog = opts.runner?.log;
    if (opts.coverage) this.coverageOptions = { ...opts.runner, size: opts.workers, coverage: true };
  }

  /** Counters of the coverage pass's runners (undefined before it first ran). */
  get coverageStats(): PoolStats | undefined {
    return this.coveragePool?.stats;
  }

  /** Counters of runner reuse (both kinds of runner), bundle and discovery caching (for tests and benchmarks). */
  get stats(): CheckerStats {
    return { pool: this.pool.stats, isolated: this.isolated?.stats ?? emptyStats(), bundle: this.bundler.stats, discovery: this.discovery.stats };
  }

  /** The isolation the runners report from inside, once one has started. */
  isolation(): IsolationReport | undefined {
    return this.pool.isolation();
  }

  /** Starts the runner processes now, so the first check does not pay the cold start. */
  warm(settings: CheckSettings = this.settings): void {
    this.pool.warm(settings.memoryLimitMb);
  }

  /** Checks every annotated op of one file; never rejects. Results are in source order. */
  async checkFile(file: string, opts: CheckFileOptions = {}): Promise<OpResult[]> {
    const settings = opts.settings ?? this.settings;
    const abs = resolve(file);
    let text = opts.text;
    let readError: string | undefined;
    if (text === undefined) {
      try {
        text = readFileSync(abs, 'utf8');
      } catch (e) {
        readError = (e as Error).message;
      }
    }
    const emit = (r: OpResult): OpResult => {
      try {
        opts.onResult?.(r);
      } catch {
        // A failing listener must not cost the other ops their results.
      }
      return r;
    };
    if (text === undefined) {
      return [emit(errorResult(abs, null, settings, 'unreadable', `cannot read the file: ${readError ?? 'unknown error'}`))];
    }
    const source = text;
    const listing = this.discovery.list(abs, source);
    const filter = opts.filter;
    const select = opts.select;
    const skipped = (count: number, by: 'filter' | 'select' | 'unchanged'): void => {
      if (count > 0) opts.onSkipped?.(count, by);
    };
    const filtered = filter ? listing.ops.filter((op) => op.forward.includes(filter)) : listing.ops;
    skipped(listing.ops.length - filtered.length, 'filter');
    const ops = select ? filtered.filter(select) : filtered;
    skipped(filtered.length - ops.length, 'select');
    // Ops that fail before bundling are unchanged when their own file is.
    if (opts.inputsChanged && ops.length > 0 && (listing.fileProblems.length > 0 || ops.every((op) => op.problems.length > 0))) {
      if (!opts.inputsChanged([abs])) {
        skipped(ops.length, 'unchanged');
        return [];
      }
    }

    if (listing.fileProblems.length > 0) {
      const message = `${FAILURE_HEADS.syntax}: ${summarizeProblems(listing.fileProblems)}`;
      if (ops.length === 0) {
        // Report the broken file only when it looks like it holds ops and none was left out on purpose.
        if (filter || listing.ops.length > 0 || !source.includes('@backward')) return [];
        if (opts.inputsChanged && !opts.inputsChanged([abs])) return [];
        return [emit(errorResult(abs, null, settings, 'syntax', message, { line: listing.fileProblems[0]?.line, problems: listing.fileProblems }))];
      }
      return ops.map((op) => emit(errorResult(abs, op, settings, 'syntax', message, { problems: [...listing.fileProblems, ...op.problems] })));
    }

    const results: Array<OpResult | undefined> = new Array(ops.length);
    const runnable: number[] = [];
    ops.forEach((op, i) => {
      if (op.problems.length > 0) {
        results[i] = emit(errorResult(abs, op, settings, 'annotation', `${FAILURE_HEADS.annotation}: ${summarizeProblems(op.problems)}`, { problems: op.problems }));
      } else {
        runnable.push(i);
      }
    });
    if (runnable.length === 0) return results as OpResult[];

    // One bundle per file, exposing every runnable op's bindings (not only the filtered ones),
    // so the cache serves every filter.
    const bindings = listing.ops.filter((op) => op.problems.length === 0).flatMap(bindingsOf);
    const tensorLibrary = listing.ops.find((op) => op.problems.length === 0 && op.target.tensorLibrary)?.target.tensorLibrary;
    const bundle = await this.bundler.bundle({ file: abs, text: source, bindings, ...(tensorLibrary ? { tensorLibrary } : {}) });
    if (bundle.ok && opts.inputsChanged && !opts.inputsChanged([abs, ...bundle.inputs])) {
      skipped(ops.length, 'unchanged');
      return [];
    }
    if (!bundle.ok) {
      const location = bundle.location;
      const problems = location && location.file === abs ? [{ line: location.line, column: location.column, message: bundle.message }] : undefined;
      for (const i of runnable) {
        results[i] = emit(errorResult(abs, ops[i], settings, 'bundle', `${FAILURE_HEADS.bundle}: ${bundle.message}`, { problems }));
      }
      return results as OpResult[];
    }

    try {
      opts.onBundle?.(bundle.inputs);
    } catch {
      // A failing listener must not stop the checks.
    }
    await this.runOps(
      { abs, source, bundle, settings, opts, emit },
      runnable.map((i) => ({
        op: ops[i]!,
        done: (r) => {
          results[i] = r;
        },
      })),
    );
    return results as OpResult[];
  }

  /**
   * Runs the bundled ops of one file in the runners, under one stop: the caller's signal, the
   * per-file time cap, or the module failing while it loads (the other ops would fail the same way).
   */
  private async runOps(file: FileRun, jobs: Array<{ op: OpDescriptor; done: (result: OpResult) => void }>): Promise<void> {
    const { settings, opts } = file;
    const stop: FileStop = { controller: new AbortController(), reason: 'cancelled', failure: 'cancelled', coverageStops: new Set() };
    const signal = stop.controller.signal;
    // One listener per queued op (the pool's) plus these few, by design: not a leak, whatever Node's default of 10 says.
    setMaxListeners(jobs.length + 10, signal);
    const fileLimitMs = settings.timeLimitMs * FILE_TIME_LIMIT_FACTOR;
    // Each op's coverage run has its own stop; one listener stops them all with the file.
    signal.addEventListener(
      'abort',
      () => {
        for (const c of stop.coverageStops) c.abort();
      },
      { once: true },
    );
    const onCallerAbort = (): void => stop.controller.abort();
    opts.signal?.addEventListener('abort', onCallerAbort, { once: true });
    if (opts.signal?.aborted) stop.controller.abort();
    const capTimer = setTimeout(() => {
      stop.reason = `not finished: the file's checks reached their total time limit of ${fileLimitMs} ms (${FILE_TIME_LIMIT_FACTOR} × the per-op limit)`;
      stop.failure = 'file-time-limit';
      stop.controller.abort();
    }, fileLimitMs);
    capTimer.unref();
    try {
      await Promise.all(jobs.map(async ({ op, done }) => this.runOp(file, stop, op, done)));
    } finally {
      clearTimeout(capTimer);
      opts.signal?.removeEventListener('abort', onCallerAbort);
    }
  }

  /** One op's verdict run, then (when asked for) its coverage run; `done` gets the result each time it changes. */
  private async runOp(file: FileRun, stop: FileStop, op: OpDescriptor, done: (result: OpResult) => void): Promise<void> {
    const { abs, bundle, settings, opts, emit } = file;
    const signal = stop.controller.signal;
    // Isolated mode: the op runs in the WebAssembly interpreter instead of a runner process.
    const interpreted = settings.isolation === 'interpreter';
    const runner = interpreted ? this.interpreter() : this.pool;
    const job = { bundleKey: bundle.key, bundleCode: bundle.code, op, settings };
    const run = await runner.run({ ...job, signal });
    // The coverage run repeats the job in its own runners once the verdict's run gave a
    // verdict: an op that failed (a hang, an allocation bomb) never runs twice, and no
    // coverage run competes with the verdict's run of the same op.
    const coverageStop = new AbortController();
    const wantCoverage = !interpreted && this.coverageOptions !== undefined && opts.coverage !== false && !signal.aborted && 'outcome' in run && run.outcome.verdict !== 'error';
    if (wantCoverage) stop.coverageStops.add(coverageStop);
    const coverageRun = wantCoverage ? this.coverageRunners().run({ ...job, signal: coverageStop.signal }) : undefined;
    if ('error' in run && run.cause === 'load') {
      const place = loadErrorPlace(abs, run.bundleFrames ?? [], bundle.originalPlace);
      if (place) {
        run.error += place.file === abs ? ` (line ${place.line})` : ` (at ${relative(dirname(abs), place.file)}:${place.line}:${place.column})`;
        if (place.file === abs) stop.loadProblems = [{ line: place.line, column: place.column, message: run.error }];
      }
      if (!signal.aborted) {
        // The module itself fails before any op code runs: the other ops of this file
        // would meet the same failure (or the same hang), so they are not run.
        stop.reason = run.error;
        stop.failure = 'load';
        stop.controller.abort();
      }
    }
    let thrownAt: SourcePlace | undefined;
    if ('outcome' in run && run.outcome.thrownFrames !== undefined) {
      // The op's own code threw: name its place in the user's source, not the bundle's.
      const place = thrownPlace(bundleFramesFrom(run.outcome.thrownFrames), bundle.originalPlace);
      delete run.outcome.thrownFrames;
      // Reported as a field (thrownAt), not in the message: the message stays the engine's own words.
      if (place) thrownAt = place;
    }
    let result: OpResult;
    if ('outcome' in run) {
      result = resultFromOutcome(abs, op, run.outcome, run.elapsedMs, run.output);
    } else {
      const cancelled = run.cause === 'cancelled';
      result = errorResult(abs, op, settings, cancelled ? stop.failure : failureOfCause(run.cause), cancelled ? stop.reason : run.error, {
        elapsedMs: run.elapsedMs,
        output: run.output,
        problems: run.cause === 'load' || cancelled ? stop.loadProblems : undefined,
      });
    }
    if (thrownAt) result.thrownAt = { file: thrownAt.file, line: thrownAt.line, column: thrownAt.column };
    if (interpreted) result.isolation = 'interpreter';
    if (interpreted && this.coverageOptions && opts.coverage !== false && result.verdict !== 'error') {
      result.coverage = { collected: false, reason: INTERPRETER_NO_COVERAGE };
    }
    const early = coverageRun !== undefined && opts.onCoverage !== undefined;
    if (!coverageRun || early) done(emit(result));
    if (!coverageRun) return;
    const coverageResult = await coverageRun;
    stop.coverageStops.delete(coverageStop);
    const covered: OpResult = { ...result };
    if ('outcome' in run && run.outcome.verdict !== 'error') {
      covered.coverage = coverageOf(op, run.outcome, coverageResult, file.source, bundle.code, bundle.segments);
    }
    if (!early) {
      done(emit(covered));
      return;
    }
    done(covered);
    try {
      if (covered.coverage) opts.onCoverage?.(covered);
    } catch {
      // As with onResult: a failing listener costs no other op its result.
    }
  }

  /** Kills the runner processes (and the interpreter's worker); the Checker cannot run checks afterwards. */
  async dispose(): Promise<void> {
    await Promise.all([this.pool.dispose(), this.isolated?.dispose(), this.coveragePool?.dispose()]);
  }

  private coverageRunners(): RunnerPool {
    this.coveragePool ??= new RunnerPool(this.coverageOptions);
    return this.coveragePool;
  }

  /** The isolated mode's runner, started on first use. */
  private interpreter(): IsolatedRunner {
    this.isolated ??= new IsolatedRunner({ log: this.runnerLog });
    return this.isolated;
  }
}

/** What the ops of one file share while they run. */
interface FileRun {
  abs: string;
  source: string;
  bundle: Extract<BundleResult, { ok: true }>;
  settings: CheckSettings;
  opts: CheckFileOptions;
  emit: (result: OpResult) => OpResult;
}

/** The stop of one file's ops, and what an op it stopped is told. */
interface FileStop {
  controller: AbortController;
  /** The message of an op the stop cancelled. */
  reason: string;
  failure: FailureKind;
  /** Where the module threw while loading, when that is a line of this file. */
  loadProblems?: Problem[];
  coverageStops: Set<AbortController>;
}
