// What a check produces: verdicts, per-parameter results, outcomes, coverage gaps and the report.
// Plain JSON-serialisable data: it crosses the process boundary from the sandbox and back.

import type { OpKind, Problem, SampleDtype } from './op';

export type Verdict = 'pass' | 'mismatch' | 'inconclusive' | 'error';

/** The element where a parameter's gradient is worst. */
export interface WorstElement {
  /** Multi-index into the parameter's shape ([] for a scalar). */
  index: number[];
  analytic: number;
  numeric: number;
  /**
   * This element's own relative error. The worst element is the one the verdict rests on: the
   * confirmed mismatch with the largest relative error, else the element with the largest one.
   * Every message that names an element names this one with this figure (`maxRelError` may be
   * larger: it also counts elements whose estimate was not trusted and random directions).
   */
  relError?: number;
}

/** Error against step size for the worst element: the data of the report's log-log plot. */
export interface StepScan {
  steps: number[];
  /** |analytic - central difference at that step|, same length as `steps`. */
  absErrors: number[];
}

/** How a parameter was checked. */
export type CheckMethod =
  | 'full' // one central difference per element
  | 'grouped' // structurally orthogonal elements share perturbations (Curtis, Powell & Reid 1974)
  | 'dot-product' // adjoint dot-product probes judged against their own error, split down to single elements
  | 'directional' // @tangent: central differences along random tangent directions
  | 'gradient-differences' // @hessian: central differences of the op's passing @backward
  | 'second-differences'; // @hessian: second differences of the forward (step u^(1/4))

/** Per-parameter result. */
export interface ParamResult {
  name: string;
  verdict: Verdict;
  maxAbsError: number;
  maxRelError: number;
  worst: WorstElement | null;
  /** Shape of the parameter ([] for a scalar) and its element type. */
  shape: number[];
  dtype: SampleDtype;
  method: CheckMethod;
  /** Elements in the parameter, and how many were compared element by element. */
  elements: number;
  checkedElements: number;
  /** Evidence-backed hints about this parameter's mismatch. */
  hints: string[];
  /**
   * Smallest relative error in a single element that this check would have caught with
   * probability at least 0.99 (the tolerance itself when every element was compared; for
   * probed parameters, from the probes' measured error and the gradient's root-mean-square
   * size: an element of about that size; for tangents and H·v, for one wrong entry of the row's
   * root-mean-square size over the check's own directions, docs/derivatives.md). Absent when no
   * check of the elements ran.
   */
  detectionFloor?: number;
  /**
   * The relative tolerance this parameter was judged with: the op's `@tolerance`, else the
   * setting for float32 when a differentiated parameter or the output is float32, else float64's.
   * Absent when the check stopped before it chose one.
   */
  tolerance?: number;
  /** Error against step size at the worst element (for the report). */
  stepScan?: StepScan;
  /** Per-element relative error for 2-D parameters up to a size cap, row-major (for the report). */
  errorMap?: number[];
}

/** Calls the check made, for benchmarks and the report. */
export interface CallCounts {
  forward: number;
  backward: number;
  /**
   * Of `forward`, the calls spent drawing the report's error-against-step pictures (up to 26 per
   * picture); they inform the reader and play no part in the verdict. Absent when none was drawn.
   */
  stepScanForward?: number;
}

/**
 * Why an op ended with verdict `error`, as data; the message words it for a reader. Set on every
 * error the engine, the sandbox or the Checker makes (absent in reports of older versions).
 */
export type FailureKind =
  | 'annotation' // the op's tags have problems; nothing ran
  | 'syntax' // the file has a syntax error; nothing ran
  | 'unreadable' // the file could not be read
  | 'bundle' // the module could not be bundled
  | 'load' // the module's own top-level code threw or hung while it loaded
  | 'threw' // the op's own code threw during the check (see thrownAt)
  | 'refused' // the op cannot be checked as written (it changes its input, returns too much, ...)
  | 'timed-out' // the runner stopped the op at its time limit
  | 'file-time-limit' // the file's checks together reached their total time limit
  | 'memory-limit' // the runner was stopped because the op used too much memory
  | 'runner-crashed' // the process running the op died under it
  | 'runner' // the runner could not start or answered nonsense
  | 'cancelled' // stopped by the caller, or the checker was closed
  | 'internal'; // a bug in the check engine

/** What the engine returns for one op (the sandbox adds nothing numeric). */
export interface CheckOutcome {
  verdict: Verdict;
  seed: number;
  message: string;
  /** Why the op could not be checked; set exactly when the verdict is `error`. */
  failure?: FailureKind;
  hints: string[];
  params: ParamResult[];
  calls: CallCounts;
  /**
   * The sample inputs that produced the verdict, for "copy as regression test": argument list
   * (and `this.FIELD` values) as JSON-safe values with typed arrays as { dtype, data }.
   * Capped in size; absent when too large.
   */
  inputs?: { args: unknown[]; fields: Record<string, unknown> };
  /**
   * 'library' when the backward compared with the finite differences was the tensor library's
   * own gradient of the forward (`@backward library-gradient`); absent for a hand-written one.
   */
  gradientSource?: 'library';
  /**
   * When the op's own code threw: "line:column,..." of the bundle script's stack frames (the
   * engine's raw positions); the host maps them to `thrownAt` and drops this field.
   */
  thrownFrames?: string;
  /**
   * Set when the check stopped at its time limit before it compared every element (or refined
   * every suspicious one): how far it got. Not a pass; the CLI fails the run on it by default.
   */
  stoppedAtTimeLimit?: TimeLimitStop;
}

/** How far a check got when its time limit stopped it (CheckOutcome.stoppedAtTimeLimit). */
export interface TimeLimitStop {
  /** The parameter being checked when time ran out. */
  param: string;
  /** What `done` and `total` count. */
  /**
   * 'dot-product probes': the root probes of a probed parameter (done of total); 'forward calls':
   * the engine's hard stop between calls (done = total = the calls of the op made).
   */
  stage: 'elements' | 'grouped perturbations' | 'suspicious elements refined' | 'dot-product probes' | 'forward calls';
  done: number;
  total: number;
  /** The op's time limit (settings.timeLimitMs), in milliseconds. */
  timeLimitMs: number;
}

/** A place in a user's source file (1-based), e.g. where an exception was thrown. */
export interface SourcePlaceRef {
  /** Relative to the current folder (CLI) with `/` separators, or absolute (server). */
  file: string;
  line: number;
  column: number;
}

/** One op's entry in the report (the `--json` `pairs` entries). */
export interface OpResult extends CheckOutcome {
  /** The derivative checked (JSON field `kind`); absent means 'backward'. */
  kind?: OpKind;
  /** Relative to the current folder (CLI) with `/` separators, or absolute (server). */
  file: string;
  line: number;
  forward: string | null;
  backward: string | null;
  elapsedMs: number;
  problems?: Problem[];
  /** Text the op printed with `console`. */
  output?: string;
  /** Where the op's own code threw (mapped through the bundle's source map), when it did. */
  thrownAt?: SourcePlaceRef;
  /**
   * 'interpreter' when the op ran in the isolated mode (a WebAssembly JavaScript interpreter,
   * slower, for small ops); absent when it ran in the normal runner process.
   */
  isolation?: 'interpreter';
  /** Which code of the forward and the backward the check ran (absent when coverage was not asked for). */
  coverage?: OpCoverage;
}

/** Blocks of one side of an op (its function and the helpers it calls in the user's files) that ran during the check. */
export interface BlockShare {
  run: number;
  total: number;
}

/** Code of an op's forward or backward (or a helper they call) that never ran during the check. */
export interface CoverageGap {
  /** Absolute (server) or relative to the current folder (CLI report), like OpResult.file. */
  file: string;
  /** 1-based; the end column is the column just after the gap's last character. */
  startLine: number;
  startColumn: number;
  endLine: number;
  endColumn: number;
  /** The function the gap is in, as written (`Class.method` for a method). */
  function: string;
  /** Whose code it is: the forward's, the backward's, or a helper's that both call. */
  side: 'forward' | 'backward' | 'both';
  /** What code it is, e.g. "else of `x > 100`", "after the return on line 12", "never called". */
  what: string;
  /**
   * When the gap sits behind a comparison of a sampled parameter with a number: which values it
   * needs and what the @sample range allows (read from the condition, never guessed).
   */
  reach?: string;
}

/**
 * Which code of the op ran during its check: V8 block coverage from a separate coverage pass,
 * mapped back to the user's TypeScript (server/src/sandbox/coverage*.ts).
 */
export type OpCoverage = { collected: true; forward: BlockShare; backward: BlockShare; gaps: CoverageGap[] } | { collected: false; reason: string };

export interface ReportSummary {
  pass: number;
  mismatch: number;
  inconclusive: number;
  error: number;
}

/** The `--json` report, version 1. */
export interface Report {
  version: 1;
  pairs: OpResult[];
  summary: ReportSummary;
  /** How the run was made (added for `gradient-probe merge`, which refuses to join unlike runs). */
  run?: ReportRun;
}

/** The record of one `check` run in its report: what a merge must find equal, and the run's part. */
export interface ReportRun {
  /** Version of gradient-probe that wrote the report. */
  tool: string;
  /** The settings every op was checked with (an op's own @seed and @tolerance still win). */
  settings: Record<string, unknown>;
  /** The configuration file read (relative path with `/`), or null when none was found. */
  config: string | null;
  /** `--filter TEXT`, when given. */
  filter?: string;
  /** Source files the run covered. */
  files: number;
  /** `--shard K/N`: this run checked part K (1-based) of N. */
  shard?: { index: number; count: number };
  /** `--changed-since REF`: the revision, and how many ops were skipped as unchanged. */
  changedSince?: { ref: string; skipped: number };
}
