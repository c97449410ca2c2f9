// The messages between the runner pool (parent) and a runner process (dist/sandbox-child.js),
// declared once so both sides agree. Every field is plain data: strings and numbers only.
import type { RunnerJobFields, RunnerReply } from './jobTypes';

/** Parent → child, once after start: the engine's source, evaluated in every fresh context. */
export interface InitMessage {
  type: 'init';
  engineCode: string;
}

/** Parent → child: one op's whole check. */
export type JobMessage = {
  type: 'job';
  id: number;
  /** Content hash of the bundle; the child keeps compiled bundles by this key. */
  bundleKey: string;
  /** The bundle's code, sent only when the parent believes the child lacks it. */
  bundleCode?: string;
} & RunnerJobFields;

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

/** Child → parent: the outcome of one job (the reply shape both kinds of runner share). */
export type ResultMessage = { type: 'result'; id: number } & RunnerReply;

/** Child → parent: the child evicted (or never had) the bundle; resend the job with its code. */
export interface MissingBundleMessage {
  type: 'missing-bundle';
  id: number;
}

/**
 * Child → parent: the job reached a step where user code runs: 'load' (the module's own
 * top-level code), then 'check'. A job the pool stops at its time limit is reported by the last
 * step it reached (no step: the runner itself never got to user code).
 */
export interface StepMessage {
  type: 'step';
  id: number;
  step: 'load' | 'check';
}

export type ChildMessage = HelloMessage | ResultMessage | MissingBundleMessage | StepMessage;
