// The one contract between the VS Code client and the language server: every custom request
// and notification, with its method string, its types and the direction it travels.
// A leaf module: it imports only data types, so both sides (and tests) can use it.

import type { OpResult, ReportSummary, Verdict } from '../model/types';

/** Where an op's forward name sits, 0-based like LSP positions. */
export interface OpRange {
  start: { line: number; character: number };
  end: { line: number; character: number };
}

/** What the client needs to show one op (Testing view item, status bar). */
export interface OpSummary {
  /** Display name: `softplus` or `Class.method`. */
  forward: string;
  range: OpRange;
  /** `checking` while a run is in flight; `unchecked` before the first result. */
  state: Verdict | 'checking' | 'unchecked' | 'not-run';
  /** One line for the Testing view and the status bar tooltip. */
  message: string;
  /** With a result: how long its check took. */
  elapsedMs?: number;
  /** With a result: its number; a higher one is a newer result (the Testing view records each once). */
  seq?: number;
}

export interface FileOps {
  uri: string;
  ops: OpSummary[];
}

/** Method strings, collected so a typo is a compile error rather than a silent no-op. */
export const Methods = {
  trustChanged: 'gradientProbe/trustChanged',
  opStates: 'gradientProbe/opStates',
  status: 'gradientProbe/status',
  listWorkspaceOps: 'gradientProbe/listWorkspaceOps',
  checkOps: 'gradientProbe/checkOps',
  checkWorkspace: 'gradientProbe/checkWorkspace',
  workspaceProgress: 'gradientProbe/workspaceProgress',
  opReport: 'gradientProbe/opReport',
  regressionTest: 'gradientProbe/regressionTest',
} as const;

/** client → server notification: the workspace's trust changed (DEVELOPERS.md, "Language server entry"). */
export interface TrustChangedParams {
  workspaceTrusted: boolean;
}

/** What the client sends in `initializationOptions` (DEVELOPERS.md, "Language server entry"). */
export interface ProbeInitializationOptions {
  workspaceTrusted?: boolean;
}

/** server → client notification: the ops of one file and where each stands. */
export type OpStatesParams = FileOps;

/** server → client notification: counts over every file the server knows, for the status bar. */
export interface StatusParams extends ReportSummary {
  checking: number;
  trusted: boolean;
  /** Op checks started since the server started (reused results not counted). */
  opsRun: number;
  /** Untrusted, and checks run in the isolated interpreter at the user's request. */
  isolated: boolean;
}

/** client → server request: every annotated op of the workspace (no code runs). */
export type ListWorkspaceOpsParams = Record<string, never>;
export type ListWorkspaceOpsResult = FileOps[];

/** client → server request: check the ops of one file (all, or those named). Cancellable. */
export interface CheckOpsParams {
  uri: string;
  /** Display names to check; absent means every op of the file. */
  forwards?: string[];
  /** Run even when an up-to-date result exists. */
  force?: boolean;
}
/**
 * Why a request has no result, as data; `reason` words it for the user. 'unknown-op': no
 * annotated op of that name in the file; 'annotation-error', 'config-error', 'untrusted': the op
 * may not run (lsp/opStanding.ts); 'not-checked': it may, but has not run yet; 'no-failing-case':
 * nothing to copy as a regression test; 'unreadable': the file cannot be read; 'bad-request': the
 * request's arguments are wrong.
 */
export type ReasonCode = 'unknown-op' | 'annotation-error' | 'config-error' | 'untrusted' | 'not-checked' | 'no-failing-case' | 'unreadable' | 'bad-request';

export interface CheckOpsResult {
  /** Empty when nothing ran; `reason` then says why (untrusted, configuration error, …). */
  results: OpResult[];
  reason?: string;
  reasonCode?: ReasonCode;
}

/** client → server request: check every source file of the workspace. Cancellable. */
export type CheckWorkspaceParams = Record<string, never>;
export interface CheckWorkspaceResult extends ReportSummary {
  files: number;
  cancelled: boolean;
  reason?: string;
  reasonCode?: ReasonCode;
}

/** server → client notification: progress of a workspace check. */
export interface WorkspaceProgressParams {
  done: number;
  total: number;
  /** The file just finished, workspace-relative when possible. */
  file: string;
}

/**
 * client → server request: the last result of one op, for the report webview. When that result
 * has a passing parameter but no passing parameter's step picture (checks draw none by
 * default), the server first re-checks the op with every picture, when it may run and its text
 * is unchanged, and answers with that result. Cancellable.
 */
export interface OpReportParams {
  uri: string;
  forward: string;
}
export interface OpReportResult {
  result: OpResult | null;
  /** The relative tolerance the op was judged with: the engine's applied one (ParamResult.tolerance). */
  tolerance?: number;
  /** Why there is no result (not checked yet, untrusted, unknown op). */
  reason?: string;
  reasonCode?: ReasonCode;
}

/** client → server request: a mocha `it(...)` reproducing the op's last check. */
export type RegressionTestParams = OpReportParams;
export interface RegressionTestResult {
  snippet: string | null;
  reason?: string;
  reasonCode?: ReasonCode;
}

/** Commands the server executes (workspace/executeCommand); code lenses use them. */
export const ServerCommands = {
  /** args: [uri: string, forward?: string] — re-check one op (or the file), ignoring the cache. */
  recheck: 'gradientProbe.server.recheck',
} as const;

/** Client-side command a code lens opens (the report webview); args: [uri, forward]. */
export const ClientCommands = {
  openReport: 'gradientProbe.openReport',
  /** args: [uri, line, character] (0-based): reveal an op's forward (the lens above its backward). */
  goToOp: 'gradientProbe.goToOp',
} as const;
