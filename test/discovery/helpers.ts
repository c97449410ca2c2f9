// Test helpers for discovery: where a piece of fixture text stands (counted by plain string
// search, independently of the compiler), and lookups of ops and problems.
import assert from 'node:assert/strict';
import type { OpDescriptor, Problem } from '../../server/src/model/types';
import { discoverOps, type DiscoveryResult } from '../../server/src/discovery/index';

/** 1-based line and column of the `nth` occurrence of `needle` (plus `shift` characters). */
export function at(text: string, needle: string, nth = 0, shift = 0): { line: number; column: number } {
  let idx = -1;
  for (let k = 0; k <= nth; k++) {
    idx = text.indexOf(needle, idx + 1);
    assert.ok(idx >= 0, `fixture text has no occurrence #${nth} of ${JSON.stringify(needle)}`);
  }
  idx += shift;
  const before = text.slice(0, idx);
  const line = before.split('\n').length;
  const column = idx - (before.lastIndexOf('\n') + 1) + 1;
  return { line, column };
}

export function discover(text: string, file = '/work/fixture/ops.ts'): DiscoveryResult {
  return discoverOps(file, text);
}

/** The one op with this display name. */
export function opNamed(result: DiscoveryResult, forward: string): OpDescriptor {
  const found = result.ops.filter((o) => o.forward === forward);
  assert.equal(found.length, 1, `expected one op '${forward}', found ${found.length}: ${result.ops.map((o) => o.forward).join(', ')}`);
  return found[0]!;
}

/**
 * Asserts the op has a problem starting exactly where `needle` stands in the text and whose
 * message matches; prints every problem on failure.
 */
export function expectProblem(text: string, op: { problems: Problem[] }, needle: string, message: RegExp, nth = 0, shift = 0): Problem {
  const pos = at(text, needle, nth, shift);
  const hit = op.problems.find((p) => p.line === pos.line && p.column === pos.column && message.test(p.message));
  assert.ok(hit, `no problem at ${pos.line}:${pos.column} matching ${message}; problems: ${JSON.stringify(op.problems, null, 1)}`);
  return hit;
}

/** One-op fixture: a JSDoc block with these lines above a declaration. */
export function withDoc(lines: string[], declaration: string, prelude = ''): string {
  return `${prelude}/**\n${lines.map((l) => ` * ${l}`).join('\n')}\n */\n${declaration}\n`;
}
