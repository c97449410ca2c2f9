// The human-readable result table of `gradient-probe check`: one row per op grouped by file,
// details under the rows that did not pass, and the summary line last. Plain text; colour optional.

import type { OpResult, Report, Verdict } from '../model/types';
import { coverageLines, uncollectedNote } from './coverageLines';
import { detailLines } from './details';
import { formatIndex, formatRelError, formatTime, paramRelError, shorten, worstParam } from '../present/format';
import { isUnfinished, VERDICTS } from './report';

export interface HumanOptions {
  /** ANSI colours (the caller decides: a terminal, NO_COLOR unset). */
  color: boolean;
  /** List only ops that did not pass. */
  onlyProblems?: boolean;
  /** Source files that were checked, for the summary. */
  fileCount?: number;
  /** Wall-clock time of the whole run, for the summary. */
  elapsedMs?: number;
  /** Lines printed just above the summary: the configuration file used, the run's part of the ops. */
  notes?: string[];
}

/** Widest op name before it is shortened with an ellipsis, in characters. */
const MAX_OP_WIDTH = 40;

const SECONDARY_DETAIL = /^(seed \d|console output:|  \|)/;
const ROW_MARGIN = '  ';
const COLUMN_GAP = '  ';
const HEADINGS = ['line', 'op', 'verdict', 'worst param', 'max rel error', 'worst index', 'time'] as const;

type Paint = (text: string) => string;
interface Palette {
  bold: Paint;
  dim: Paint;
  verdict: (v: Verdict, text: string) => string;
}

function palette(color: boolean): Palette {
  const wrap = (code: string): Paint => (color ? (t) => `\x1b[${code}m${t}\x1b[0m` : (t) => t);
  const byVerdict: Record<Verdict, Paint> = { pass: wrap('32'), mismatch: wrap('31;1'), inconclusive: wrap('33'), error: wrap('35;1') };
  return { bold: wrap('1'), dim: wrap('2'), verdict: (v, t) => byVerdict[v](t) };
}

/** The whole human output, ending with a newline. */
export function formatHuman(report: Report, options: HumanOptions): string {
  const paint = palette(options.color);
  const shown = options.onlyProblems ? report.pairs.filter((p) => p.verdict !== 'pass') : report.pairs;
  const lines: string[] = [];
  if (shown.length > 0) {
    const rows = shown.map(rowCells);
    const widths = HEADINGS.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i]!.length)));
    const indent = ' '.repeat(widths[0]! + 4);
    lines.push(paint.dim(layout([...HEADINGS], widths)));
    let currentFile: string | undefined;
    shown.forEach((pair, i) => {
      if (pair.file !== currentFile) {
        currentFile = pair.file;
        lines.push(paint.bold(pair.file));
      }
      const cells = rows[i]!;
      const text = layout(cells, widths);
      // Colour only the verdict cell; padding is computed on the plain text so columns stay aligned.
      const at = ROW_MARGIN.length + widths[0]! + COLUMN_GAP.length + widths[1]! + COLUMN_GAP.length;
      lines.push(text.slice(0, at) + paint.verdict(pair.verdict, cells[2]!) + text.slice(at + cells[2]!.length));
      // Messages, problems and hints stay at full strength; the seed and captured output recede.
      for (const detail of detailLines(pair)) lines.push(indent + (SECONDARY_DETAIL.test(detail) ? paint.dim(detail) : detail));
      // Coverage gaps recede too: they say what the check did not test, not that the op is wrong.
      for (const detail of coverageLines(pair)) lines.push(indent + paint.dim(detail));
    });
    lines.push('');
  }
  const note = uncollectedNote(report);
  if (note) lines.push(paint.dim(note));
  for (const note of options.notes ?? []) lines.push(paint.dim(note));
  lines.push(summaryLine(report, options));
  return lines.join('\n') + '\n';
}

/** "5 ops in 2 files: 3 pass, 1 mismatch, 0 inconclusive, 1 error (1.4 s)". */
export function summaryLine(report: Report, options: Pick<HumanOptions, 'fileCount' | 'elapsedMs'> = {}): string {
  const n = report.pairs.length;
  const where = options.fileCount === undefined ? '' : ` in ${options.fileCount} ${options.fileCount === 1 ? 'file' : 'files'}`;
  const time = options.elapsedMs === undefined ? '' : ` (${formatTime(options.elapsedMs)})`;
  if (n === 0) return `no annotated ops found${where}${time}`;
  const unfinished = report.pairs.filter(isUnfinished).length;
  // An op the time limit stopped is inconclusive but fails the run: the summary says how many.
  const counts = VERDICTS.map((v) => `${report.summary[v]} ${v}${v === 'inconclusive' && unfinished > 0 ? ` (${unfinished} stopped at the time limit)` : ''}`).join(', ');
  return `${n} ${n === 1 ? 'op' : 'ops'}${where}: ${counts}${time}`;
}

function rowCells(pair: OpResult): string[] {
  const param = pair.verdict === 'error' ? undefined : worstParam(pair);
  return [
    String(pair.line),
    shorten(pair.forward ?? '(file)', MAX_OP_WIDTH),
    pair.verdict === 'pass' || pair.verdict === 'inconclusive' ? pair.verdict : pair.verdict.toUpperCase(),
    param ? param.name : '-',
    // The figure beside the worst index is that element's own (one rule: model/types.ts WorstElement).
    param ? formatRelError(paramRelError(param)) : '-',
    param?.worst ? formatIndex(param.worst.index) : '-',
    formatTime(pair.elapsedMs),
  ];
}

/** Cells padded to their column; the line number is right-aligned, the time too. */
function layout(cells: string[], widths: number[]): string {
  return cells
    .map((cell, i) => (i === 0 || i === cells.length - 1 ? cell.padStart(widths[i]!) : cell.padEnd(widths[i]!)))
    .join(COLUMN_GAP)
    .replace(/^/, ROW_MARGIN)
    .trimEnd();
}
