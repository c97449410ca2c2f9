// The Checker: the one orchestration shared by the CLI, the language server and benchmarks.
// discovery → bundle once per file → one sandbox job per op (in parallel across runners) → OpResult.
import { setMaxListeners } from 'node:events';
import { existsSync, readFileSync } from 'node:fs';
import { dirname, relative, resolve } from 'node:path';
import { discoverOps, type DiscoveryResult } from '../discovery/index';
import type { CheckSettings } from '../engine/settings';
import type { CheckOutcome, OpCoverage, OpDescriptor, OpResult, Problem } from '../model/types';
import { Bundler, type BundleStats } from '../sandbox/bundle';
import { UNAVAILABLE_BUILTIN_NAMESPACE } from '../sandbox/builtinStandIn';
import { bundleFramesFrom } from '../sandbox/contextSetup';
import { opCoverage } from '../sandbox/coverageMap';
import type { MappedSegment, SourcePlace } from '../sandbox/sourceMap';
import { IsolatedRunner } from '../sandbox/isolated';
import { emptyStats, type RunnerStats, type RunResult } from '../sandbox/jobTypes';
import { RunnerPool, type IsolationReport, type PoolStats, type RunnerPoolOptions } from '../sandbox/pool';
import { errorResult, resultFromOutcome, summarizeProblems } from './opResult';

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

/** Why an op run in the isolated interpreter has no coverage. */
export const INTERPRETER_NO_COVERAGE = 'not collected: the op ran in the isolated interpreter, which does not record coverage';

export interface CheckFileOptions {
  /** The file's text (an unsaved editor buffer); default: read from disk. */
  text?: string;
  /** Only ops whose forward name contains this text. */
  filter?: string;
  signal?: AbortSignal;
  /** Called once per op as soon as its result is known. */
  onResult?: (result: OpResult) => void;
  /** Overrides the Checker's settings for this call. */
  settings?: CheckSettings;
  /** Called with the bundle's input files (absolute paths) once the file is bundled. */
  onBundle?: (inputs: string[]) => void;
  /** Only ops this accepts are checked, after `filter` (the CLI's --shard); the others are left out. */
  select?: (op: OpDescriptor) => boolean;
  /**
   * Given the files the ops' bundle is built from (the checked file first, then what it imports,
   * from the bundler's own list), whether the ops must be checked (the CLI's --changed-since);
   * false leaves every op of the file out. Without a bundle (it failed) the ops are checked.
   */
  inputsChanged?: (inputs: readonly string[]) => boolean;
  /** Told how many ops `filter`, `select` or `inputsChanged` left out, and which of them did. */
  onSkipped?: (count: number, by: 'filter' | 'select' | 'unchanged') => void;
  /**
   * With coverage on: when given, onResult gets each op's result as soon as its verdict is
   * known, and this gets the same op's result again once its coverage is there (the returned
   * results carry it too). Without it, onResult waits for the coverage.
   */
  onCoverage?: (result: OpResult) => void;
  /** Collect coverage in this call (default true; only a Checker made with `coverage` can). */
  coverage?: boolean;
}

/** The ops of a file without running anything (code lenses, hovers, the tests view). */
export interface OpListing extends DiscoveryResult {
  /** Absolute path. */
  file: string;
  /** Set when the file could not be read; ops and fileProblems are then empty. */
  readError?: string;
}

/** Discovers the ops of a file from the given text or the disk. Never throws. */
export function listOps(file: string, text?: string): OpListing {
  const abs = resolve(file);
  let source = text;
  if (source === undefined) {
    try {
      source = readFileSync(abs, 'utf8');
    } catch (e) {
      return { file: abs, ops: [], fileProblems: [], readError: (e as Error).message };
    }
  }
  return { file: abs, ...discoverOps(abs, source) };
}

/** The top-level names the sandbox must expose for an op (see OpTarget). */
export function bindingsOf(op: OpDescriptor): string[] {
  const t = op.target;
  const names: string[] = [];
  if (t.kind === 'method') {
    if (t.className) names.push(t.className);
  } else if (t.objectName) {
    names.push(t.objectName);
  } else {
    names.push(t.forwardName);
  }
  if (!t.backwardIsMethod && !t.libraryGradient) names.push(t.backwardName);
  // A @hessian op also calls the forward's @backward (its reference when that passes).
  if (op.gradient && !op.gradient.backwardIsMethod && !names.includes(op.gradient.backwardName)) names.push(op.gradient.backwardName);
  if (t.samplesFactory) names.push(t.samplesFactory);
  if (t.constructFactory) names.push(t.constructFactory);
  return names;
}

export interface CheckerStats {
  pool: PoolStats;
  /** The isolated interpreter's counters (all zero until an op runs there). */
  isolated: RunnerStats;
  bundle: BundleStats;
}

export class Checker {
  private readonly settings: CheckSettings;
  private readonly bundler = new Bundler({ diskCache: true });
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

  /** Counters of runner reuse (both kinds of runner) and bundle caching (for tests and benchmarks). */
  get stats(): CheckerStats {
    return { pool: this.pool.stats, isolated: this.isolated?.stats ?? emptyStats(), bundle: this.bundler.stats };
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
      return [emit(errorResult(abs, null, settings, `cannot read the file: ${readError ?? 'unknown error'}`))];
    }
    const source = text;
    const listing = listOps(abs, source);
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
      const message = `the file has a syntax error, so none of its ops can run: ${summarizeProblems(listing.fileProblems)}`;
      if (ops.length === 0) {
        // Report the broken file only when it looks like it holds ops and none was left out on purpose.
        if (filter || listing.ops.length > 0 || !source.includes('@backward')) return [];
        if (opts.inputsChanged && !opts.inputsChanged([abs])) return [];
        return [emit(errorResult(abs, null, settings, message, { line: listing.fileProblems[0]?.line, problems: listing.fileProblems }))];
      }
      return ops.map((op) => emit(errorResult(abs, op, settings, message, { problems: [...listing.fileProblems, ...op.problems] })));
    }

    const results: Array<OpResult | undefined> = new Array(ops.length);
    const runnable: number[] = [];
    ops.forEach((op, i) => {
      if (op.problems.length > 0) {
        results[i] = emit(errorResult(abs, op, settings, `annotation problem: ${summarizeProblems(op.problems)}`, { problems: op.problems }));
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
        results[i] = emit(errorResult(abs, ops[i], settings, `the module could not be bundled: ${bundle.message}`, { problems }));
      }
      return results as OpResult[];
    }

    try {
      opts.onBundle?.(bundle.inputs);
    } catch {
      // A failing listener must not stop the checks.
    }

    // The per-file cap and the caller's signal both stop what is still queued or running.
    const stop = new AbortController();
    // Every queued op listens to it (one listener each): not a leak, whatever Node's default of 10 says.
    setMaxListeners(runnable.length + 10, stop.signal);
    const fileLimitMs = settings.timeLimitMs * FILE_TIME_LIMIT_FACTOR;
    let stopReason = 'cancelled';
    // Where the module threw while loading, when that is a line of this file.
    let loadProblems: Problem[] | undefined;
    // Each op's coverage run has its own stop; one listener stops them all with the file.
    const coverageStops = new Set<AbortController>();
    // One listener per queued op (the pool's) plus these few, by design: not a leak.
    setMaxListeners(runnable.length + 4, stop.signal);
    stop.signal.addEventListener('abort', () => { for (const c of coverageStops) c.abort(); }, { once: true });
    const onCallerAbort = (): void => stop.abort();
    opts.signal?.addEventListener('abort', onCallerAbort, { once: true });
    if (opts.signal?.aborted) stop.abort();
    const capTimer = setTimeout(() => {
      stopReason = `not finished: the file's checks reached their total time limit of ${fileLimitMs} ms (${FILE_TIME_LIMIT_FACTOR} × the per-op limit)`;
      stop.abort();
    }, fileLimitMs);
    capTimer.unref();
    try {
      await Promise.all(
        runnable.map(async (i) => {
          const op = ops[i];
          // Isolated mode: the op runs in the WebAssembly interpreter instead of a runner process.
          const interpreted = settings.isolation === 'interpreter';
          const runner = interpreted ? this.interpreter() : this.pool;
          const job = { bundleKey: bundle.key, bundleCode: bundle.code, op, settings };
          const run = await runner.run({ ...job, signal: stop.signal });
          // The coverage run repeats the job in its own runners once the verdict's run gave a
          // verdict: an op that failed (a hang, an allocation bomb) never runs twice, and no
          // coverage run competes with the verdict's run of the same op.
          const coverageStop = new AbortController();
          const wantCoverage = !interpreted && this.coverageOptions !== undefined && opts.coverage !== false
            && !stop.signal.aborted && 'outcome' in run && run.outcome.verdict !== 'error';
          if (wantCoverage) coverageStops.add(coverageStop);
          const coverageRun = wantCoverage ? this.coverageRunners().run({ ...job, signal: coverageStop.signal }) : undefined;
          if ('error' in run && run.cause === 'load') {
            const place = loadErrorPlace(abs, run.bundleFrames ?? [], bundle.originalPlace);
            if (place) {
              run.error += place.file === abs ? ` (line ${place.line})` : ` (at ${relative(dirname(abs), place.file)}:${place.line}:${place.column})`;
              if (place.file === abs) loadProblems = [{ line: place.line, column: place.column, message: run.error }];
            }
            if (!stop.signal.aborted) {
              // The module itself fails before any op code runs: the other ops of this file
              // would meet the same failure (or the same hang), so they are not run.
              stopReason = run.error;
              stop.abort();
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
          const result =
            'outcome' in run
              ? resultFromOutcome(abs, op, run.outcome, run.elapsedMs, run.output)
              : errorResult(abs, op, settings, run.cause === 'cancelled' ? stopReason : run.error, {
                  elapsedMs: run.elapsedMs,
                  output: run.output,
                  problems: run.cause === 'load' || run.cause === 'cancelled' ? loadProblems : undefined,
                });
          if (thrownAt) result.thrownAt = { file: thrownAt.file, line: thrownAt.line, column: thrownAt.column };
          if (interpreted) result.isolation = 'interpreter';
          if (interpreted && this.coverageOptions && opts.coverage !== false && result.verdict !== 'error') {
            result.coverage = { collected: false, reason: INTERPRETER_NO_COVERAGE };
          }
          const early = coverageRun !== undefined && opts.onCoverage !== undefined;
          if (!coverageRun || early) results[i] = emit(result);
          if (coverageRun) {
            const coverageResult = await coverageRun;
            coverageStops.delete(coverageStop);
            const covered: OpResult = { ...result };
            if ('outcome' in run && run.outcome.verdict !== 'error') {
              covered.coverage = coverageOf(op, run.outcome, coverageResult, source, bundle.code, bundle.segments);
            }
            if (early) {
              results[i] = covered;
              try {
                if (covered.coverage) opts.onCoverage?.(covered);
              } catch {
                // As with onResult: a failing listener costs no other op its result.
              }
            } else {
              results[i] = emit(covered);
            }
          }
        }),
      );
    } finally {
      clearTimeout(capTimer);
      opts.signal?.removeEventListener('abort', onCallerAbort);
    }
    return results as OpResult[];
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

/**
 * The op's coverage from the coverage pass. It describes the verdict's check only when the pass
 * repeated that check: same verdict and the same number of forward and backward calls (the
 * engine's time budget could make a slower run do less). Otherwise no coverage is claimed.
 */
export function coverageOf(
  op: OpDescriptor, outcome: CheckOutcome, run: RunResult, checkedText: string, bundleCode: string, segments: () => MappedSegment[],
): OpCoverage {
  if (!('outcome' in run)) return { collected: false, reason: `not collected: the coverage run failed (${run.error})` };
  if (!run.coverage) return { collected: false, reason: 'not collected: the coverage runner returned no coverage' };
  const same = run.outcome.verdict === outcome.verdict && run.outcome.calls.forward === outcome.calls.forward && run.outcome.calls.backward === outcome.calls.backward;
  if (!same) return { collected: false, reason: 'not collected: the coverage run did not repeat the check exactly (different calls), so its coverage would not describe this check' };
  try {
    return opCoverage({ op, checkedText, bundleCode, segments: segments(), blocks: run.coverage });
  } catch (e) {
    return { collected: false, reason: `not collected: ${(e as Error).message}` };
  }
}

type PlaceFinder = (line: number, column: number) => SourcePlace | undefined;

/**
 * The first bundle frame (innermost first) whose place `preferred` accepts, else the first that
 * maps anywhere. Frames in a built-in's stand-in are skipped: the error is made there, the user
 * called it elsewhere.
 */
function firstPlace(frames: Array<{ line: number; column: number }>, originalPlace: PlaceFinder, preferred: (place: SourcePlace) => boolean): SourcePlace | undefined {
  let first: SourcePlace | undefined;
  for (const frame of frames) {
    const place = originalPlace(frame.line, frame.column);
    if (!place || place.file.includes(UNAVAILABLE_BUILTIN_NAMESPACE)) continue;
    if (preferred(place)) return place;
    first ??= place;
  }
  return first;
}

/**
 * Where user code threw: the innermost frame in the user's own files (not a package under
 * node_modules; a package's own source map can point outside it, at files that are not there).
 */
function thrownPlace(frames: Array<{ line: number; column: number }>, originalPlace: PlaceFinder): SourcePlace | undefined {
  return firstPlace(frames, originalPlace, (place) => !/[\\/]node_modules[\\/]/.test(place.file) && existsSync(place.file));
}

/** Where the module threw while loading: the first frame in the checked file. */
function loadErrorPlace(file: string, frames: Array<{ line: number; column: number }>, originalPlace: PlaceFinder): SourcePlace | undefined {
  return firstPlace(frames, originalPlace, (place) => place.file === file);
}
