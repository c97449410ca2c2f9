// What the editor features know about one document at a moment: its text, the ops discovery
// found in it, and the latest results and running states. Diagnostics, code lenses, hovers
// and the Testing view data are all pure functions of this.

import { discoverOps } from '../discovery/index';
import type { OpDescriptor, OpResult } from '../model/types';

export interface DocumentSnapshot {
  uri: string;
  fsPath: string;
  text: string;
  lines: string[];
  ops: OpDescriptor[];
}

export interface DocumentFacts {
  snapshot: DocumentSnapshot;
  trusted: boolean;
  /** Untrusted, but the user opted in to checks in the isolated interpreter. */
  isolated: boolean;
  /** A broken project file: nothing runs. */
  configError?: { message: string; file?: string };
  /** Mark unreached code of checked backwards (gradientProbe.showUnreached); absent means yes. */
  showUnreached?: boolean;
  latest(forward: string): OpResult | undefined;
  /** The number of the latest result (new results get higher numbers), when known. */
  resultSeq?(forward: string): number | undefined;
  isRunning(forward: string): boolean;
}

/** Discovery over the current text; it never throws by contract, but a bug there must not kill the server. */
export function snapshotOf(uri: string, fsPath: string, text: string, log: (line: string) => void): DocumentSnapshot {
  let ops: OpDescriptor[] = [];
  try {
    ops = discoverOps(fsPath, text).ops;
  } catch (err) {
    log(`discovery failed on ${fsPath}: ${err instanceof Error ? (err.stack ?? err.message) : String(err)}`);
  }
  return { uri, fsPath, text, lines: text.split(/\r?\n/), ops };
}
