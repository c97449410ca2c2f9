// Joins the labelled accuracy corpus (test/corpus/labels.json) with a `--json` report of the
// command line, and formats the per-class table the accuracy test prints when a bar is missed.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';

export type OpClass = 'correct' | 'bug' | 'kink' | 'broken';

/** labels.json: file (relative to test/corpus) → forward name (`Class.method` for methods) → label. */
export type CorpusLabels = Record<string, Record<string, { class: OpClass; what: string }>>;

/** One `pairs` entry of the report, as far as this test reads it. */
export interface ReportedPair {
  file: string;
  line: number;
  forward: string | null;
  verdict: string;
  message: string;
  hints?: string[];
  params?: { name: string; verdict: string; maxRelError: number; hints?: string[] }[];
}

/** A labelled op with what the report said about it (verdict 'absent' when it is not in the report). */
export interface JudgedOp {
  file: string;
  forward: string;
  label: OpClass;
  what: string;
  verdict: string;
  message: string;
  hints: string[];
  worstRelError: number | null;
}

export function loadLabels(root: string): CorpusLabels {
  return JSON.parse(readFileSync(join(root, 'test', 'corpus', 'labels.json'), 'utf8')) as CorpusLabels;
}

/** Matches report entries to labels by file (under test/corpus/) and forward name. */
export function judge(labels: CorpusLabels, pairs: ReportedPair[]): { ops: JudgedOp[]; unlabelled: ReportedPair[] } {
  const prefix = 'test/corpus/';
  const byKey = new Map<string, ReportedPair>();
  const unlabelled: ReportedPair[] = [];
  for (const pair of pairs) {
    const file = pair.file.replace(/\\/g, '/');
    const rel = file.startsWith(prefix) ? file.slice(prefix.length) : file;
    if (pair.forward !== null && labels[rel]?.[pair.forward]) byKey.set(`${rel}#${pair.forward}`, pair);
    else unlabelled.push(pair);
  }
  const ops: JudgedOp[] = [];
  for (const [file, entries] of Object.entries(labels)) {
    for (const [forward, label] of Object.entries(entries)) {
      const pair = byKey.get(`${file}#${forward}`);
      const rels = (pair?.params ?? []).map((p) => p.maxRelError).filter((v) => typeof v === 'number' && Number.isFinite(v));
      ops.push({
        file,
        forward,
        label: label.class,
        what: label.what,
        verdict: pair?.verdict ?? 'absent',
        message: pair?.message ?? '',
        hints: allHints(pair),
        worstRelError: rels.length > 0 ? Math.max(...rels) : null,
      });
    }
  }
  return { ops, unlabelled };
}

/** A plain-text table: op, label, verdict, worst relative error, message (and hints). */
export function formatTable(ops: JudgedOp[]): string {
  const rows = ops.map((o) => [
    `${o.file} ${o.forward}`,
    o.label,
    o.verdict,
    o.worstRelError === null ? '-' : o.worstRelError.toExponential(2),
    [o.message, ...o.hints].filter(Boolean).join(' | ').slice(0, 160),
  ]);
  const head = ['op', 'label', 'verdict', 'max rel err', 'message'];
  const widths = head.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i].length)));
  const line = (r: string[]): string => r.map((c, i) => (i === r.length - 1 ? c : c.padEnd(widths[i]))).join('  ');
  return [line(head), ...rows.map(line)].join('\n');
}

/** Verdict counts per label class, e.g. `bug: 21 mismatch, 1 pass`. */
export function classSummary(ops: JudgedOp[]): string {
  const classes: OpClass[] = ['correct', 'bug', 'kink', 'broken'];
  return classes
    .map((c) => {
      const counts = new Map<string, number>();
      for (const o of ops.filter((x) => x.label === c)) counts.set(o.verdict, (counts.get(o.verdict) ?? 0) + 1);
      const parts = [...counts.entries()].sort().map(([v, n]) => `${n} ${v}`);
      return `${c} (${ops.filter((x) => x.label === c).length}): ${parts.join(', ')}`;
    })
    .join('\n');
}

/** The op's hints and its parameters' hints, each once. */
export function allHints(pair: ReportedPair | undefined): string[] {
  if (!pair) return [];
  return [...new Set([...(pair.hints ?? []), ...(pair.params ?? []).flatMap((p) => p.hints ?? [])])];
}
