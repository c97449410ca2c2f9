// The sandbox's job, reply and result shapes, declared once: the process runners, the isolated
// interpreter, their message protocols and the reply reader all use these. A leaf module (it
// imports only the engine's data shapes), so no two sandbox modules import each other for types.
import type { CheckSettings } from '../engine/settings';
import type { CheckOutcome, OpDescriptor } from '../model/types';

/** Console text kept per op, in characters: enough for debugging prints, small enough for a report. */
export const OUTPUT_LIMIT_CHARS = 64 * 1024;

/** One op's check: the bundle of its file, the op and the settings. */
export interface RunJob {
  bundleKey: string;
  bundleCode: string;
  op: OpDescriptor;
  settings: CheckSettings;
  signal?: AbortSignal;
}

/** What every runner process is told about a job, whichever kind it is (the wire form of a RunJob's check). */
export interface RunnerJobFields {
  /** JSON of the engine's OpCheckRequest ({ op, settings }). */
  requestJson: string;
  /** Seed of the context's Math.random (the op's seed). */
  seed: number;
  /** Time limit for loading the module and running the check, in whole milliseconds (vm accepts only a positive integer). */
  timeLimitMs: number;
  /** Most characters of console text kept for the op. */
  outputLimitChars: number;
  /**
   * Whether a process runner may run this check on its warm engine (the engine in a context of its
   * own, the op's module in a fresh one) rather than loading the engine into the op's context.
   */
  warmEngine: boolean;
}

/**
 * Most sampled elements an op may have for the warm engine. The warm engine sees every op's arrays
 * from a realm of their own, so its element loops stay generic (megamorphic) where a fresh engine
 * specialises them to the one op; but a fresh engine starts unoptimised every check. Measured in
 * one runner after the engine copied whole arrays with TypedArray `set` (bench/profileRunner.js
 * KIND N 30 --engine=warm|cold, runner CPU ms a job, load ~2; bench/PERFORMANCE.md): elementwise
 * 1,000 16 / 21, 10,000 48 / 102, 30,000 136 / 134; row softmax 10,000 100 / 144; conv1d 10,000
 * 75 / 166; softmax over one vector 10,000 68 / 95; at 100,000 the fresh engine wins (elementwise
 * 733 / 339 ms elapsed). The crossover lies near 30,000; this stays below it.
 */
export const WARM_ENGINE_MAX_ELEMENTS = 10_000;

/** Sampled elements of an op's random `@sample` inputs; undefined when some input's size is unknown before the check. */
export function sampledElements(op: OpDescriptor): number | undefined {
  if (op.target.samplesFactory !== undefined) return undefined;
  let total = 0;
  for (const p of op.params) {
    const spec = p.sample;
    if (spec === undefined) continue;
    if (spec.kind !== 'random') return undefined;
    let size = 1;
    for (const d of spec.shape) size *= d;
    total += size;
  }
  return total;
}

/** The fields every runner process gets for a job. */
export function runnerJobFields(job: RunJob): RunnerJobFields {
  return {
    requestJson: JSON.stringify({ op: job.op, settings: job.settings }),
    seed: job.op.seed ?? job.settings.seed,
    timeLimitMs: Math.max(1, Math.floor(job.settings.timeLimitMs)),
    outputLimitChars: OUTPUT_LIMIT_CHARS,
    warmEngine: (sampledElements(job.op) ?? Infinity) <= WARM_ENGINE_MAX_ELEMENTS,
  };
}

/** A place in the bundle's code: 1-based line, 0-based column. */
export interface BundleFrame {
  line: number;
  column: number;
}

/**
 * Why a job failed without an outcome. 'load': the module's top-level code threw or hung, so
 * every op of its file would fail the same way; 'runner': the runner could not start or answered
 * nonsense; 'closed': the runner was disposed.
 */
export type RunFailureCause = 'timeout' | 'crash' | 'memory' | 'cancelled' | 'load' | 'runner' | 'closed';

/**
 * V8 block coverage of the bundle during one job (coverage runners only, sandbox/coverageSession.ts):
 * per function, its ranges as [start, end, count] with offsets into the bundle's code; nested
 * ranges override.
 */
export interface BlockCoverage {
  functions: Array<{ name: string; ranges: Array<[number, number, number]> }>;
}

/** The argument after the runner script that makes a runner collect coverage. */
export const COVERAGE_RUNNER_ARG = '--gradient-probe-coverage';

/** What a caller of a runner gets for one job. */
export type RunResult =
  | { outcome: CheckOutcome; output: string; elapsedMs: number; coverage?: BlockCoverage }
  | {
      error: string;
      output?: string;
      elapsedMs: number;
      cause: RunFailureCause;
      /** For an error thrown while the module loaded: positions in the bundle's code, innermost first. */
      bundleFrames?: BundleFrame[];
    };

/** A RunResult that failed. */
export type RunFailure = Extract<RunResult, { error: string }>;

/** What a runner (the process runner or the isolated interpreter) sends back for one job. */
export type RunnerReply = (
  | { ok: true; outcomeJson: string; coverage?: BlockCoverage }
  | {
      ok: false;
      error: string;
      timedOut: boolean;
      /** True when the module's own top-level code threw or hung: every op of its file would fail the same way. */
      duringLoad: boolean;
      /** For an error thrown at load: where, in the bundle's code, innermost first. */
      bundleFrames?: BundleFrame[];
    }
) & { output: string; elapsedMs: number };

/** Counters of one kind of runner, for tests, benchmarks and logs (no timing: tests assert on these). */
export interface RunnerStats {
  /** Processes started. */
  spawned: number;
  /** Jobs handed to a process that had already run a job before (warm reuse). */
  warmJobs: number;
  jobsStarted: number;
  jobsFinished: number;
  /** Bundle code sent over IPC (a process runner that holds a bundle gets only its key). */
  bundlesSent: number;
  /** Jobs that ran out of time, stopped from inside or by the watchdog. */
  timeouts: number;
  /** Processes that died under a job without being told to. */
  crashes: number;
  /** Processes killed because their memory passed the limit. */
  memoryKills: number;
  cancelled: number;
}

export function emptyStats(): RunnerStats {
  return { spawned: 0, warmJobs: 0, jobsStarted: 0, jobsFinished: 0, bundlesSent: 0, timeouts: 0, crashes: 0, memoryKills: 0, cancelled: 0 };
}
