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
}

/** The fields every runner process gets for a job. */
export function runnerJobFields(job: RunJob): RunnerJobFields {
  return {
    requestJson: JSON.stringify({ op: job.op, settings: job.settings }),
    seed: job.op.seed ?? job.settings.seed,
    timeLimitMs: Math.max(1, Math.floor(job.settings.timeLimitMs)),
    outputLimitChars: OUTPUT_LIMIT_CHARS,
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
