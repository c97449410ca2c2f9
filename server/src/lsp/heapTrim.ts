// Keeps the language server's memory flat over many checks: the garbage a finished check leaves
// in the old generation is collected once it adds up, instead of growing the heap until V8's own
// limit (hundreds of MiB on a large machine) makes it collect.
//
// Measured (bench/PERFORMANCE.md, "Warm runner and server memory"): over 1,000 forced checks of
// one file the server's live heap stayed near 19 MiB while its old generation grew 20 → 31 MiB
// in 400 checks and its RSS 114 → 151 MiB by check 1,000, because no full collection ran. A full
// collection of a heap this size takes milliseconds.

import { getHeapSpaceStatistics, setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';

/** Growth of the old generation since the last full collection that triggers one, in bytes. */
const GROWTH_BYTES = 4 * 1024 * 1024;

/**
 * V8's full collection as a function: the `gc` of a context made while `--expose-gc` is set,
 * which is turned off again at once so no later context gets it (Node's own start-up flag does
 * the same for every context). Undefined if the runtime refuses.
 */
function obtainCollector(): (() => void) | undefined {
  const existing = (globalThis as { gc?: unknown }).gc;
  if (typeof existing === 'function') return existing as () => void;
  try {
    setFlagsFromString('--expose-gc');
    const gc: unknown = runInNewContext('gc');
    return typeof gc === 'function' ? (gc as () => void) : undefined;
  } catch {
    return undefined;
  } finally {
    setFlagsFromString('--no-expose-gc');
  }
}

function oldSpaceUsed(): number {
  for (const space of getHeapSpaceStatistics()) if (space.space_name === 'old_space') return space.space_used_size;
  return 0;
}

export class HeapTrim {
  private readonly collect = obtainCollector();
  private base = oldSpaceUsed();
  /** Full collections run so far (for logs and tests). */
  collections = 0;

  /** After a check: collect when the old generation grew by GROWTH_BYTES since the last collection. */
  afterCheck(): void {
    if (!this.collect) return;
    if (oldSpaceUsed() - this.base < GROWTH_BYTES) return;
    this.collect();
    this.collections++;
    this.base = oldSpaceUsed();
  }
}
