// The ops of a file without running anything (code lenses, hovers, the tests view, the
// Checker's first step), and the top-level names the sandbox must expose for an op.
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { discoverOps, type DiscoveryResult } from '../discovery/index';
import type { OpDescriptor } from '../model/types';

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
