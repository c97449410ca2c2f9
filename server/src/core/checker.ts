// The Checker: the one orchestration shared by the CLI, the language server and benchmarks.
// discovery → bundle once per file → one sandbox job per op (in parallel across runners) → OpResult.
import { setMaxListeners } from 'node:events';
import { existsSync, readFileSync } from 'node:fs';
import { dirname, relative, resolve } from 'node:path';
import { discoverOps, type DiscoveryResult } from '../discovery/index';
import type { CheckSettings } from '../engine/settings';
import type { OpDescriptor, OpResult, Problem } from '../engine/types';
import { Bundler, type BundleStats } from '../sandbox/bundle';
import { UNAVAILABLE_BUILTIN_NAMESPACE } from '../sandbox/builtinStandIn';
import { bundleFramesFrom } from '../sandbox/contextSetup';
import type { SourcePlace } from '../sandbox/sourceMap';
import { IsolatedRunner } from '../sandbox/isolated';
import { emptyStats, type RunnerStats } from '../sandbox/jobTypes';
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
}

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

  constructor(opts: CheckerOptions) {
    this.settings = opts.settings;
    this.pool = new RunnerPool({ ...opts.runner, size: opts.workers });
    this.runnerLog = opts.runner?.log;
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
    const ops = filter ? listing.ops.filter((op) => op.forward.includes(filter)) : listing.ops;

    if (listing.fileProblems.length > 0) {
      const message = `the file has a syntax error, so none of its ops can run: ${summarizeProblems(listing.fileProblems)}`;
      if (ops.length === 0) {
        // Report the broken file only when it looks like it holds ops (or a filter found none).
        if (filter || !source.includes('@backward')) return [];
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
          const run = await runner.run({ bundleKey: bundle.key, bundleCode: bundle.code, op, settings, signal: stop.signal });
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
          results[i] = emit(result);
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
    await Promise.all([this.pool.dispose(), this.isolated?.dispose()]);
  }

  /** The isolated mode's runner, started on first use. */
  private interpreter(): IsolatedRunner {
    this.isolated ??= new IsolatedRunner({ log: this.runnerLog });
    return this.isolated;
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
