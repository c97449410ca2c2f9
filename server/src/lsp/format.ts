// Shared wording and number formatting for what the editor shows about a result: the worst
// parameter, figures in scientific notation, indices, and positions converted to LSP's 0-based form.

import type { OpDescriptor, OpResult, ParamResult, Problem, SourcePosition } from '../model/types';
import type { OpRange } from './protocol';

/** The parameter that decides an op's figure: the worst mismatching one, else the largest error. */
export function worstParam(result: OpResult): ParamResult | undefined {
  const rank = (p: ParamResult): number => (p.verdict === 'mismatch' ? 2 : p.verdict === 'inconclusive' ? 1 : 0);
  let best: ParamResult | undefined;
  for (const p of result.params) {
    if (!best || rank(p) > rank(best) || (rank(p) === rank(best) && p.maxRelError > best.maxRelError)) best = p;
  }
  return best;
}

/** 3.1e-10; two significant digits are what a reader compares against a tolerance. */
export function sci(value: number | null | undefined): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return '—';
  if (value === 0) return '0';
  return value.toExponential(1);
}

/** A value the user compares by eye (analytic vs numeric): enough digits to see where they part. */
export function figure(value: number | null | undefined): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return '—';
  return Number(value.toPrecision(6)).toString();
}

export function indexText(index: number[] | undefined): string {
  return index && index.length > 0 ? `[${index.join(', ')}]` : 'scalar';
}

export function shapeText(p: ParamResult): string {
  return p.shape.length === 0 ? p.dtype : `${p.dtype}[${p.shape.join(', ')}]`;
}

export function millis(ms: number): string {
  return ms < 10 ? `${ms.toFixed(1)} ms` : ms < 10_000 ? `${Math.round(ms)} ms` : `${(ms / 1000).toFixed(1)} s`;
}

/** First line of a message, cut to fit a lens or a status line. */
export function oneLine(text: string, max = 120): string {
  const first = text.split('\n')[0]!.trim();
  return first.length > max ? `${first.slice(0, max - 1)}…` : first;
}

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
      return p ? `gradient agrees; worst ${p.name} at ${sci(p.maxRelError)} relative` : 'gradient agrees';
    case 'mismatch':
      // A Jacobian, tangent or Hessian names its wrong entry or output in the message.
      if (result.kind !== undefined && result.kind !== 'backward') return `${result.kind} is wrong: ${oneLine(result.message)}`;
      return p && p.worst
        ? `gradient of ${p.name} is wrong: max relative error ${sci(p.worst.relError ?? p.maxRelError)} at ${indexText(p.worst.index)} (backward ${figure(p.worst.analytic)}, numeric ${figure(p.worst.numeric)})`
        : `gradient is wrong: ${oneLine(result.message)}`;
    case 'inconclusive':
      return `inconclusive: ${oneLine(result.message || 'the numeric estimate cannot be trusted here')}`;
    case 'error':
      return `could not check: ${oneLine(result.message || 'unknown failure', 300)}`;
  }
}
