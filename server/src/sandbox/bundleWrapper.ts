// How bundle and engine code is wrapped before it runs in a context (the context's captured
// built-ins become the wrapper's parameters), and how stack positions in the wrapped script map
// back to positions in the bundle's own code.
import { CONTEXT_BUILTINS } from './contextSetup';

/** Lines wrapWithBuiltins puts in front of the code (for mapping stack positions back). */
export const WRAPPER_LINES = 1;

/** Wraps engine or bundle code in a function that receives CONTEXT_BUILTINS as parameters. */
export function wrapWithBuiltins(code: string): string {
  // The newline before `})` keeps a trailing line comment (source map URL) from eating it.
  return `(function (${CONTEXT_BUILTINS.join(', ')}) {\n${code}\n})`;
}

/**
 * "line:column,..." frames of the wrapped bundle script, as positions in the bundle's own code:
 * the wrapper adds one line in front (wrapWithBuiltins), and source maps count columns from 0.
 */
export function bundleFramesFrom(text: string): Array<{ line: number; column: number }> {
  const frames: Array<{ line: number; column: number }> = [];
  for (const part of text.split(',')) {
    const m = /^(\d+):(\d+)$/.exec(part);
    if (!m) continue;
    const line = Number(m[1]) - WRAPPER_LINES;
    if (line >= 1) frames.push({ line, column: Math.max(0, Number(m[2]) - 1) });
  }
  return frames;
}
