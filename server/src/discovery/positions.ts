// Turns character offsets in the source text into the 1-based positions that problems, tags
// and ops carry. Columns count UTF-16 code units, as the TypeScript compiler and LSP do.
import type ts from 'typescript';
import type { Problem, ProblemFix, SourcePosition } from '../model/types';

/** A stretch of the source text by character offset; `end` is exclusive. */
export interface Span {
  start: number;
  end: number;
}

/** A problem found while reading a tag, still in offsets (converted once at the end). */
export interface SpanProblem extends Span {
  message: string;
  /** Quick fixes, the likeliest first (Problem.fixes). */
  fixes?: ProblemFix[];
}

/** Converts offsets of one source file; offsets outside the text are clamped into it. */
export class PositionMapper {
  constructor(private readonly sourceFile: ts.SourceFile) {}

  at(offset: number): SourcePosition {
    const text = this.sourceFile.text;
    let clamped = Math.max(0, Math.min(offset, text.length));
    // Never between the two characters of a CRLF line end: that is no place on either line.
    if (clamped > 0 && text[clamped - 1] === '\r' && text[clamped] === '\n') clamped--;
    const lc = this.sourceFile.getLineAndCharacterOfPosition(clamped);
    return { line: lc.line + 1, column: lc.character + 1 };
  }

  /** A problem whose range covers the span (end exclusive, like an editor range). */
  problem(span: SpanProblem): Problem {
    const start = this.at(span.start);
    const end = this.at(Math.max(span.start, span.end));
    const problem: Problem = { line: start.line, column: start.column, endLine: end.line, endColumn: end.column, message: span.message };
    if (span.fixes && span.fixes.length > 0) problem.fixes = span.fixes;
    return problem;
  }
}
