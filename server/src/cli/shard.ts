// `check --shard K/N`: a deterministic partition of the ops over N CI jobs. An op's part comes
// from a hash of its file (as the report names it) and its forward name alone, so adding,
// removing or moving another op never moves it, and every machine computes the same parts.

import { createHash } from 'node:crypto';
import type { Shard } from './args';

/** The part (1-based) of `count` that holds the op `forward` of `file` (a report path: relative, `/`). */
export function shardOfOp(file: string, forward: string | null, count: number): number {
  // SHA-256 is spread evenly over its first 32 bits; NUL cannot occur in a path or a name.
  const digest = createHash('sha256')
    .update(`${file}\0${forward ?? ''}`, 'utf8')
    .digest();
  return (digest.readUInt32BE(0) % count) + 1;
}

/** Whether `shard` holds the op. */
export function inShard(shard: Shard, file: string, forward: string | null): boolean {
  return shardOfOp(file, forward, shard.count) === shard.index;
}
