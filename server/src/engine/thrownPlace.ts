// Where user code threw: the "line:column" positions of the bundle script in an exception's
// stack (V8 prints them as `user-bundle.js:L:C`), for the host to map through the bundle's
// source map to the user's TypeScript file, line and column.

import { findText, sliceText } from './builtins';

/** The script name the sandbox gives the user bundle (sandbox/child.ts, isolatedEval.ts). */
const BUNDLE_SCRIPT = 'user-bundle.js:';
/** Frames kept: enough to get past a shared helper to the op's own line. */
const MAX_FRAMES = 10;

function digitsAt(s: string, i: number): number {
  let j = i;
  while (j < s.length && s[j] >= '0' && s[j] <= '9') j++;
  return j;
}

/** "L:C,L:C,..." of the bundle frames of a thrown value's stack ('' when it has none). */
export function bundleFramesOf(thrown: unknown): string {
  let stack: unknown;
  try {
    if (thrown === null || typeof thrown !== 'object') return '';
    stack = (thrown as { stack?: unknown }).stack;
  } catch {
    return '';
  }
  if (typeof stack !== 'string') return '';
  let out = '';
  let count = 0;
  let from = 0;
  while (count < MAX_FRAMES) {
    const rest = sliceText(stack, from);
    const at = findText(rest, BUNDLE_SCRIPT);
    if (at < 0) break;
    const lineStart = from + at + BUNDLE_SCRIPT.length;
    const lineEnd = digitsAt(stack, lineStart);
    from = lineEnd;
    if (lineEnd === lineStart || stack[lineEnd] !== ':') continue;
    const colEnd = digitsAt(stack, lineEnd + 1);
    if (colEnd === lineEnd + 1) continue;
    out += (count > 0 ? ',' : '') + sliceText(stack, lineStart, colEnd);
    count++;
    from = colEnd;
  }
  return out;
}
