// The messages between the runner pool (parent) and a runner process (dist/sandbox-child.js),
// declared once so both sides agree. Every field is plain data: strings and numbers only.

/** Parent → child, once after start: the engine's source, evaluated in every fresh context. */
export interface InitMessage {
  type: 'init';
  engineCode: string;
}

/** Parent → child: one op's whole check. */
export interface JobMessage {
  type: 'job';
  id: number;
  /** Content hash of the bundle; the child keeps compiled bundles by this key. */
  bundleKey: string;
  /** The bundle's code, sent only when the parent believes the child lacks it. */
  bundleCode?: string;
  /** JSON of the engine's CheckRequest ({ op, settings }). */
  requestJson: string;
  /** Seed of the context's Math.random (the op's seed). */
  seed: number;
  /** vm timeout for loading the module and running the check, in milliseconds. */
  timeLimitMs: number;
  /** Most characters of console text kept for the op. */
  outputLimitChars: number;
}

export type ParentMessage = InitMessage | JobMessage;

/** Child → parent, once it is ready: what isolation it really runs with (checked from inside). */
export interface HelloMessage {
  type: 'hello';
  pid: number;
  nodeVersion: string;
  /** `process.permission` exists and denies reading an arbitrary path (`/`). */
  permissionActive: boolean;
  /** Human-readable summary of the isolation, for logs and the CLI's verbose output. */
  isolation: string;
}

/** Child → parent: the outcome of one job. */
/**
 * V8 block coverage of the bundle during one job (coverage runners only): per function, its
 * ranges as [start, end, count] with offsets into the bundle's code; nested ranges override.
 */
export interface BlockCoverage {
  functions: Array<{ name: string; ranges: Array<[number, number, number]> }>;
}

export type ResultMessage =
  | { type: 'result'; id: number; ok: true; outcomeJson: string; output: string; elapsedMs: number; coverage?: BlockCoverage }
  | {
      type: 'result';
      id: number;
      ok: false;
      error: string;
      timedOut: boolean;
      /** True when the module's own top-level code threw or hung: every op of its file would fail the same way. */
      duringLoad: boolean;
      /** For an error thrown at load: where, in the bundle's code (1-based line, 0-based column), innermost first. */
      bundleFrames?: Array<{ line: number; column: number }>;
      output: string;
      elapsedMs: number;
    };

/** Child → parent: the child evicted (or never had) the bundle; resend the job with its code. */
export interface MissingBundleMessage {
  type: 'missing-bundle';
  id: number;
}

export type ChildMessage = HelloMessage | ResultMessage | MissingBundleMessage;
