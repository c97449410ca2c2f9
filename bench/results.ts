// The shapes of the benchmark's figures: what each worker prints as JSON and what
// bench/results/latest.json holds. Plain data, so the JSON file and the printed table agree.
import type { CallCounts } from '../server/src/model/types';
import type { CallBudget } from './floor';
import type { HandLoopResult } from './handLoop';

/** One op at one size: check, floor and hand-written loop (bench/opWorker.ts). */
export interface OpMeasurement {
  kind: string;
  forward: string;
  shape: string;
  elements: number;
  outputs: number;
  verdict: string;
  message: string;
  /** `param:method` per parameter, as the check reports it. */
  methods: string[];
  /** Share of differentiated elements compared one by one (1 = every element). */
  coverage: number;
  /** The check's own counts of forward and backward calls (CheckOutcome.calls). */
  calls: CallCounts;
  check: {
    /** First check in the process: runner start and first bundle included, in ms. */
    coldMs: number;
    /** Untimed runs between the cold run and the timed ones. */
    warmupRuns?: number;
    /** Warm checks, wall time of Checker.checkFile, in ms. */
    wallMs: number[];
    medianMs: number;
    /** Median time inside the runner (fresh context, engine, module, check), in ms. */
    runnerMedianMs: number;
  };
  floor: { calls: CallBudget; medianMs: number; reps: number; forwardMs: number; backwardMs: number; fromPerCall: boolean };
  hand: HandLoopResult;
}

/** Seeded-bug trials of one op at one size (bench/detectWorker.ts). */
export interface DetectionMeasurement {
  kind: string;
  forward: string;
  elements: number;
  /** The parameter whose gradient carries the bug (absent in runs recorded before it was recorded: the op's default). */
  bugParam?: string;
  bugCount: number;
  bugRelative: number;
  trials: number;
  firstSeed: number;
  /** Trials whose verdict was mismatch. */
  caught: number;
  /** Caught trials whose reported worst element is one of the seeded ones. */
  located: number;
  /** Verdicts other than mismatch, with their count. */
  missed: Record<string, number>;
  /** The seeds of the trials not caught, with their verdict, and of caught trials not located (absent in older runs). */
  missedSeeds?: { seed: number; verdict: string; note?: string }[];
  /** Lower bound of the catch probability at 95 % confidence (Clopper–Pearson, one-sided). */
  lowerBound95: number;
  medianMs: number;
  maxMs: number;
  methods: string[];
}

export interface LatencyMeasurement {
  file: string;
  ops: number;
  /** Fresh server: spawn → initialized, and didOpen → diagnostics of the finished check, ms. */
  coldStartMs: number;
  coldOpenMs: number;
  /** First save after the server started (edit + didSave → finished diagnostics), ms. */
  firstSaveMs: number;
  /** Later saves, each after an edit, ms. */
  warmSavesMs: number[];
  warmMedianMs: number;
  warmP90Ms: number;
}

export interface ThroughputMeasurement {
  files: number;
  ops: number;
  /** Checker in this process, all files in flight, warm runners: median ms per workspace check. */
  checker: {
    workers: number;
    runsMs: number[];
    medianMs: number;
    verdicts: Record<string, number>;
    /** Median share of the machine's CPU time left idle during a run (/proc/stat): near 0 means the cores were full. */
    idleShare?: number;
  }[];
  /** `gradient-probe check DIR --workers N` end to end (process start included), median ms. */
  cli: { workers: number; runsMs: number[]; medianMs: number }[];
  speedup: number;
  cliSpeedup: number;
}

export interface MemoryMeasurement {
  checks: number[];
  /** RSS of the language server process after that many checks, in MiB. */
  serverRssMb: number[];
  /** RSS of the runner processes (sum) at the same points, in MiB. */
  runnerRssMb: number[];
  growth100to1000: number;
}

export interface GoalLine {
  goal: string;
  figure: string;
  met: boolean | null;
}

export interface BenchReport {
  version: 1;
  startedAt: string;
  machine: { cpu: string; cores: number; memory: string; node: string; platform: string; loadBefore: number[]; loadAfter: number[] };
  settings: Record<string, unknown>;
  /** The source measured: HEAD and the files under server/ that differed from it (others' work in progress). */
  source: { commit: string; modified: string[] };
  ops: OpMeasurement[];
  detection: DetectionMeasurement[];
  latency: LatencyMeasurement[];
  throughput: ThroughputMeasurement | null;
  memory: MemoryMeasurement | null;
  goals: GoalLine[];
  /** The run of record before this one (bench/results/latest.json), judged by the same rules, for the goals table. */
  previous?: { startedAt: string; commit: string; goals: GoalLine[] };
  /** Filters of a partial run (--kinds, --sizes, --trials), recorded so the file says what it holds. */
  filters?: Record<string, string>;
}
