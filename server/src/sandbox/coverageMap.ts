// Turns V8 block coverage of a bundle into the report's coverage of one op: each block of the
// op's forward, backward and helpers (coverageBlocks.ts) is looked up at its first mapped place
// in the bundle (through the source map), and the innermost V8 range there says whether it ran.
import type { CoverageGap, OpCoverage, OpDescriptor } from '../model/types';
import { blocksOf, type CodeBlock, type CodeFunction } from './coverageBlocks';
import { findOpFunctions } from './coverageFunctions';
import { reachHint } from './coverageReach';
import type { BlockCoverage } from './jobTypes';
import type { MappedSegment } from './sourceMap';

export interface CoverageInput {
  op: OpDescriptor;
  /** The checked file's text as bundled (it may be an unsaved buffer). */
  checkedText: string;
  bundleCode: string;
  segments: MappedSegment[];
  blocks: BlockCoverage;
}

/** Original places of one file that the source map knows, sorted, each with its bundle offset. */
type FileIndex = Array<{ line: number; column: number; offset: number }>;

function lineStarts(text: string): number[] {
  const starts = [0];
  for (let i = 0; i < text.length; i++) if (text.charCodeAt(i) === 10) starts.push(i + 1);
  return starts;
}

/** Indexes already built, per bundle (its decoded mappings are one array kept with the bundle). */
const indexes = new WeakMap<MappedSegment[], Map<string, FileIndex>>();

function indexByFile(segments: MappedSegment[], bundleCode: string): Map<string, FileIndex> {
  const known = indexes.get(segments);
  if (known) return known;
  const starts = lineStarts(bundleCode);
  const byFile = new Map<string, FileIndex>();
  for (const s of segments) {
    // Packages are never the user's code (coverageBlocks.ts follows no import into them).
    if (s.place.file.includes('/node_modules/') || s.place.file.includes('\\node_modules\\')) continue;
    const lineStart = starts[s.genLine - 1];
    if (lineStart === undefined) continue;
    let list = byFile.get(s.place.file);
    if (!list) byFile.set(s.place.file, (list = []));
    list.push({ line: s.place.line, column: s.place.column, offset: lineStart + s.genColumn });
  }
  for (const list of byFile.values()) list.sort((a, b) => a.line - b.line || a.column - b.column || a.offset - b.offset);
  indexes.set(segments, byFile);
  return byFile;
}

/** Innermost-range lookup over every V8 range of the bundle. */
class RangeCounts {
  private readonly ranges: Array<[number, number, number]> = [];
  constructor(coverage: BlockCoverage) {
    for (const fn of coverage.functions) for (const r of fn.ranges) this.ranges.push(r);
  }
  /** The count of the smallest range holding the offset; undefined when none does. */
  countAt(offset: number): number | undefined {
    let best: [number, number, number] | undefined;
    for (const r of this.ranges) {
      if (r[0] <= offset && offset < r[1] && (!best || r[1] - r[0] <= best[1] - best[0])) best = r;
    }
    return best?.[2];
  }
}

/** First mapped place at or after (line, column) and before (endLine, endColumn), 1-based. */
function firstMapped(index: FileIndex | undefined, line: number, column: number, endLine: number, endColumn: number): number | undefined {
  if (!index) return undefined;
  let lo = 0;
  let hi = index.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    const m = index[mid]!;
    if (m.line < line || (m.line === line && m.column < column)) lo = mid + 1;
    else hi = mid;
  }
  const hit = index[lo];
  if (!hit || hit.line > endLine || (hit.line === endLine && hit.column >= endColumn)) return undefined;
  return hit.offset;
}

function place(fn: CodeFunction, offset: number): { line: number; column: number } {
  const p = fn.sf.getLineAndCharacterOfPosition(offset);
  return { line: p.line + 1, column: p.character + 1 };
}

function sideOf(fn: CodeFunction): CoverageGap['side'] {
  return fn.sides.size > 1 ? 'both' : fn.sides.has('backward') ? 'backward' : 'forward';
}

/** The op's coverage; `collected: false` with the reason when its code cannot be found or measured. */
export function opCoverage(input: CoverageInput): OpCoverage {
  const { functions } = findOpFunctions(input.op, input.checkedText);
  if (functions.length === 0) return { collected: false, reason: 'the forward and backward were not found in the source' };
  const blocks = blocksOf(functions);
  const index = indexByFile(input.segments, input.bundleCode);
  const counts = new RangeCounts(input.blocks);
  const ran = new Map<CodeBlock, boolean>();
  for (const b of blocks) {
    const start = place(b.fn, b.start);
    const end = place(b.fn, b.end);
    const offset = firstMapped(index.get(b.fn.file), start.line, start.column, end.line, end.column);
    if (offset === undefined) continue; // no bundle code for it (types only, removed as dead): not counted
    const count = counts.countAt(offset);
    if (count !== undefined) ran.set(b, count > 0);
  }
  if (ran.size === 0) return { collected: false, reason: 'no block of the op could be found in the bundle' };

  const share = { forward: { run: 0, total: 0 }, backward: { run: 0, total: 0 } };
  for (const [b, didRun] of ran) {
    for (const side of b.fn.sides) {
      share[side].total++;
      if (didRun) share[side].run++;
    }
  }

  // A function whose entry never ran is one gap; inside a function that ran, each unreached
  // block whose enclosing blocks ran is one gap (the blocks nested in it are part of it).
  const gaps: CoverageGap[] = [];
  const uncalled = new Set<CodeFunction>();
  const entries = new Map<CodeFunction, CodeBlock>();
  for (const b of blocks) if (!b.parent && !entries.has(b.fn)) entries.set(b.fn, b);
  for (const [fn, entry] of entries) {
    if (ran.get(entry) !== false) continue;
    uncalled.add(fn);
    gaps.push(gapOf(fn, fn.node.getStart(fn.sf), fn.node.end, 'never called'));
  }
  for (const b of blocks) {
    if (ran.get(b) !== false || uncalled.has(b.fn) || entries.get(b.fn) === b) continue;
    let inside = false;
    for (let p = b.parent; p; p = p.parent) if (ran.get(p) === false) inside = true;
    if (inside) continue;
    const gap = gapOf(b.fn, b.start, b.end, b.what);
    const hint = reachHint(b, input.op);
    if (hint) gap.reach = hint;
    gaps.push(gap);
  }
  gaps.sort((a, b) => (a.file < b.file ? -1 : a.file > b.file ? 1 : a.startLine - b.startLine || a.startColumn - b.startColumn));
  return { collected: true, forward: share.forward, backward: share.backward, gaps };
}

function gapOf(fn: CodeFunction, start: number, end: number, what: string): CoverageGap {
  const s = place(fn, start);
  const e = place(fn, end);
  return {
    file: fn.file,
    startLine: s.line,
    startColumn: s.column,
    endLine: e.line,
    endColumn: e.column,
    function: fn.name,
    side: sideOf(fn),
    what,
  };
}
