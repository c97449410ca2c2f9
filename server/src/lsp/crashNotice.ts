// Tells the user once when a runner process died under an op, instead of on every keystroke
// that re-checks the same broken op: one message per op until that op stops crashing.

import type { FailureKind, OpResult } from '../model/types';

/**
 * Failures that mean the process running the op died or was killed for its memory, rather than
 * the op failing inside it (OpResult.failure, set by the Checker from the runner's cause).
 */
const CRASHES: ReadonlySet<FailureKind> = new Set(['runner-crashed', 'memory-limit']);

export class CrashNotice {
  /** `file#forward` of ops whose latest run crashed and was already reported. */
  private readonly reported = new Set<string>();

  constructor(private readonly show: (message: string) => void) {}

  /** Looks at a file's fresh results; shows one message per op that newly crashed. */
  observe(fsPath: string, results: readonly OpResult[]): void {
    for (const r of results) {
      const key = `${fsPath}#${r.forward ?? ''}`;
      if (r.failure === undefined || !CRASHES.has(r.failure)) {
        this.reported.delete(key);
        continue;
      }
      if (this.reported.has(key)) continue;
      this.reported.add(key);
      this.show(`Gradient Probe: checking ${r.forward ?? 'a file'} crashed its runner process, which was replaced: ${r.message}`);
    }
  }
}
