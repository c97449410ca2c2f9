// The report as JUnit XML, the test-report format CI servers read: a test suite per source
// file, a test case per op; mismatch → <failure>, error → <error>, inconclusive → <skipped>.
// Coverage gaps go to the case's <system-out>; with --fail-on-unreached a backward gap is a <failure>.

import type { OpResult, Report } from '../model/types';
import { backwardHasGaps, coverageLines } from './coverageLines';
import { detailLines } from './details';
import { formatRelError, paramRelError, worstParam } from '../present/format';
import { isFailing, type FailPolicy } from './report';

/**
 * Which ops count as failures: the CLI's own policy (--fail-on-inconclusive, --allow-unfinished),
 * and --fail-on-unreached, which fails an op whose backward has code the check never ran.
 */
export type JunitOptions = FailPolicy & { failOnUnreached?: boolean };

/** The JUnit XML document. */
export function formatJunit(report: Report, options: JunitOptions = {}): string {
  const byFile = new Map<string, OpResult[]>();
  for (const pair of report.pairs) {
    const list = byFile.get(pair.file) ?? [];
    list.push(pair);
    byFile.set(pair.file, list);
  }
  const suites = [...byFile].map(([file, pairs]) => suite(file, pairs, options));
  const all = counts(report.pairs, options);
  return ['<?xml version="1.0" encoding="UTF-8"?>', `<testsuites name="Gradient Probe" ${countAttributes(all)}>`, ...suites, '</testsuites>', ''].join('\n');
}

interface Counts {
  tests: number;
  failures: number;
  errors: number;
  skipped: number;
  timeMs: number;
}

function counts(pairs: readonly OpResult[], options: JunitOptions): Counts {
  const c: Counts = { tests: pairs.length, failures: 0, errors: 0, skipped: 0, timeMs: 0 };
  for (const p of pairs) {
    const kind = outcomeKind(p, options);
    if (kind === 'failure') c.failures++;
    else if (kind === 'error') c.errors++;
    else if (kind === 'skipped') c.skipped++;
    c.timeMs += Number.isFinite(p.elapsedMs) ? p.elapsedMs : 0;
  }
  return c;
}

function countAttributes(c: Counts): string {
  return `tests="${c.tests}" failures="${c.failures}" errors="${c.errors}" skipped="${c.skipped}" time="${seconds(c.timeMs)}"`;
}

function suite(file: string, pairs: readonly OpResult[], options: JunitOptions): string {
  const cases = pairs.map((p) => testCase(p, options));
  return [`  <testsuite name="${escapeXmlAttribute(file)}" ${countAttributes(counts(pairs, options))}>`, ...cases, '  </testsuite>'].join('\n');
}

type OutcomeKind = 'pass' | 'failure' | 'error' | 'skipped';

function outcomeKind(pair: OpResult, options: JunitOptions): OutcomeKind {
  switch (pair.verdict) {
    case 'pass':
      return options.failOnUnreached === true && backwardHasGaps(pair) ? 'failure' : 'pass';
    case 'mismatch':
      return 'failure';
    case 'error':
      return 'error';
    case 'inconclusive':
      return isFailing(pair, options) ? 'failure' : 'skipped';
  }
}

function testCase(pair: OpResult, options: JunitOptions): string {
  const attrs = [
    `name="${escapeXmlAttribute(pair.forward ?? '(file)')}"`,
    `classname="${escapeXmlAttribute(pair.file)}"`,
    `file="${escapeXmlAttribute(pair.file)}"`,
    `line="${pair.line}"`,
    `time="${seconds(pair.elapsedMs)}"`,
  ].join(' ');
  const kind = outcomeKind(pair, options);
  const inner: string[] = [];
  const gaps = coverageLines(pair);
  if (kind !== 'pass') {
    const unreached = pair.verdict === 'pass';
    const message = escapeXmlAttribute(unreached ? 'code of the backward never ran during the check (--fail-on-unreached)' : headline(pair));
    // The console output has its own <system-out> element.
    const details = escapeXmlText((unreached ? gaps : detailLines(pair, { withOutput: false })).join('\n'));
    if (kind === 'skipped') inner.push(`      <skipped message="${message}"/>`);
    else inner.push(`      <${kind} message="${message}" type="${unreached ? 'unreached-code' : pair.verdict}">${details}</${kind}>`);
  }
  // What the op printed, then the coverage gaps (the lines the CLI shows under the op).
  const out = [pair.output ?? '', gaps.join('\n')].filter((t) => t.length > 0).join('\n');
  if (out) inner.push(`      <system-out>${escapeXmlText(out)}</system-out>`);
  if (inner.length === 0) return `    <testcase ${attrs}/>`;
  return [`    <testcase ${attrs}>`, ...inner, '    </testcase>'].join('\n');
}

/** One line saying what went wrong, for the failure's message attribute. */
function headline(pair: OpResult): string {
  const param = worstParam(pair);
  if (pair.verdict === 'mismatch' && param) {
    return `gradient of ${param.name} disagrees with finite differences (max relative error ${formatRelError(paramRelError(param))})`;
  }
  const firstProblem = pair.problems?.[0];
  if (firstProblem) return `${pair.file}:${firstProblem.line}:${firstProblem.column}: ${firstProblem.message}`;
  return pair.message || pair.verdict;
}

function seconds(ms: number): string {
  return (Number.isFinite(ms) && ms > 0 ? ms / 1000 : 0).toFixed(3);
}

/**
 * Escapes text for XML element content, replacing characters XML 1.0 does not allow at all
 * (W3C XML 1.0 §2.2 Char: most C0 controls, lone surrogates, U+FFFE/U+FFFF) with U+FFFD.
 * A carriage return becomes a reference, since parsers turn a raw one into a line feed (§2.11).
 */
export function escapeXmlText(text: string): string {
  return text
    .replace(/[^\t\n\r\u0020-\uD7FF\uE000-\uFFFD\u{10000}-\u{10FFFF}]/gu, '\uFFFD')
    .replace(/&/g, '&amp;')
    .replace(/</g, '&lt;')
    .replace(/>/g, '&gt;')
    .replace(/\r/g, '&#13;');
}

/** Escapes text for a double-quoted attribute value, keeping line breaks as character references. */
export function escapeXmlAttribute(text: string): string {
  // A parser turns raw line breaks and tabs in attribute values into spaces (XML 1.0 §3.3.3).
  return escapeXmlText(text).replace(/"/g, '&quot;').replace(/\n/g, '&#10;').replace(/\t/g, '&#9;');
}
