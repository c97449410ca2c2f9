// What the editor features share about a result: positions converted to LSP's 0-based ranges,
// and the short verdict sentence. Figures (relative errors, values, indices, times) and the
// worst parameter come from the presentation module every surface shares (present/format.ts).

import type { OpDescriptor, OpResult, Problem, SourcePosition } from '../model/types';
import { formatIndex, formatNumber, formatRelError, oneLine, paramRelError, worstParam } from '../present/format';
import type { OpRange } from './protocol';

/** 1-based position (and optional end) → 0-based LSP range; a missing end covers the word there. */
export function toRange(start: SourcePosition, end: SourcePosition | undefined, lines: readonly string[]): OpRange {
  const line = Math.max(0, start.line - 1);
  const character = Math.max(0, start.column - 1);
  if (end && (end.line > start.line || (end.line === start.line && end.column > start.column))) {
    return { start: { line, character }, end: { line: end.line - 1, character: end.column - 1 } };
  }
  const text = lines[line] ?? '';
  const word = /^[\w$.@]+/.exec(text.slice(character));
  const length = word ? word[0].length : Math.max(1, text.length - character);
  return { start: { line, character }, end: { line, character: character + length } };
}

export function opNameRange(op: OpDescriptor, lines: readonly string[]): OpRange {
  return toRange(op, { line: op.endLine, column: op.endColumn }, lines);
}

export function problemRange(problem: Problem, lines: readonly string[]): OpRange {
  const end = problem.endLine !== undefined && problem.endColumn !== undefined ? { line: problem.endLine, column: problem.endColumn } : undefined;
  return toRange(problem, end, lines);
}

export function contains(range: OpRange, position: { line: number; character: number }): boolean {
  const after = position.line > range.start.line || (position.line === range.start.line && position.character >= range.start.character);
  const before = position.line < range.end.line || (position.line === range.end.line && position.character <= range.end.character);
  return after && before;
}

/** The short sentence for a finished op, used by the diagnostic, the lens tooltip and the Testing view. */
export function verdictSentence(result: OpResult): string {
  const p = worstParam(result);
  switch (result.verdict) {
    case 'pass':
      return p ? `gradient agrees; worst ${p.name} at ${formatRelError(paramRelError(p))} relative` : 'gradient agrees';
    case 'mismatch':
      // A Jacobian, tangent or Hessian names its wrong entry or output in the message.
      if (result.kind !== undefined && result.kind !== 'backward') return `${result.kind} is wrong: ${oneLine(result.message)}`;
      return p && p.worst
        ? `gradient of ${p.name} is wrong: max relative error ${formatRelError(paramRelError(p))} at ${formatIndex(p.worst.index)} (backward ${formatNumber(p.worst.analytic)}, numeric ${formatNumber(p.worst.numeric)})`
        : `gradient is wrong: ${oneLine(result.message)}`;
    case 'inconclusive':
      return `inconclusive: ${oneLine(result.message || 'the numeric estimate cannot be trusted here')}`;
    case 'error':
      return `could not check: ${oneLine(result.message || 'unknown failure', 300)}`;
  }
}
