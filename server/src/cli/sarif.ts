// The report as a SARIF 2.1.0 log (OASIS Static Analysis Results Interchange Format), so CI
// code-scanning views can show mismatches and errors at their source lines.

import { pathToFileURL } from 'node:url';
import type { OpResult, Report } from '../model/types';
import { gapSentence } from './coverageLines';
import { formatIndex, formatNumber, formatRelError, paramRelError, worstParam } from '../present/format';
import { isUnfinished } from './report';

/** SARIF 2.1.0's published JSON schema, as the standard's `$schema` property names it. */
export const SARIF_SCHEMA_URI = 'https://json.schemastore.org/sarif-2.1.0.json';
/** The base every relative artifact URI is resolved against (SARIF §3.14.14 originalUriBaseIds). */
const SOURCE_ROOT_ID = '%SRCROOT%';

type SarifLevel = 'error' | 'warning' | 'note';

interface RuleSpec {
  id: string;
  name: string;
  level: SarifLevel;
  short: string;
  full: string;
}

/** Our result kinds. A pass is not a finding and has no rule. */
export const SARIF_RULES: readonly RuleSpec[] = [
  {
    id: 'gradient-mismatch',
    name: 'GradientMismatch',
    level: 'error',
    short: 'Hand-written gradient disagrees with finite differences',
    full: 'The backward function returns a gradient that differs from a refined finite-difference estimate beyond the tolerance.',
  },
  {
    id: 'check-error',
    name: 'CheckError',
    level: 'error',
    short: 'Op could not be checked',
    full: 'The op failed before a verdict: a thrown exception, a missing function, a bad shape, NaN or Infinity, a time or memory limit, or a file that does not load.',
  },
  {
    id: 'annotation-problem',
    name: 'AnnotationProblem',
    level: 'error',
    short: 'Annotation tag is wrong',
    full: "A tag of the op's annotation cannot be understood, so the op is not run.",
  },
  {
    id: 'check-inconclusive',
    name: 'CheckInconclusive',
    level: 'warning',
    short: 'Finite differences cannot be trusted here',
    full: 'The finite-difference estimate is unreliable at the sample point (a kink that resampling did not escape, or a forward that is not deterministic).',
  },
  {
    id: 'check-unfinished',
    name: 'CheckUnfinished',
    level: 'error',
    short: 'Time limit stopped the check before every element was compared',
    full: 'The check ran out of its time limit part way; the elements it did not compare may hold a wrong gradient. Raise the time limit (--time-limit, timeLimitMs).',
  },
  {
    id: 'unreached-code',
    name: 'UnreachedCode',
    level: 'note',
    short: 'Code the check never ran',
    full: 'Code of the forward or the backward (or of a helper they call) that none of the sampled inputs reached during the check, so the check says nothing about it.',
  },
];

export interface SarifOptions {
  toolVersion: string;
  /** Absolute folder the report's relative paths start from (the current folder). */
  rootDir: string;
}

/** The SARIF log as pretty-printed JSON text. */
export function formatSarif(report: Report, options: SarifOptions): string {
  return JSON.stringify(sarifLog(report, options), null, 2) + '\n';
}

/** The SARIF log object. */
export function sarifLog(report: Report, options: SarifOptions): Record<string, unknown> {
  const rootUri = pathToFileURL(options.rootDir).href.replace(/\/?$/, '/');
  return {
    $schema: SARIF_SCHEMA_URI,
    version: '2.1.0',
    runs: [
      {
        tool: {
          driver: {
            name: 'Gradient Probe',
            version: options.toolVersion,
            semanticVersion: options.toolVersion,
            rules: SARIF_RULES.map((r) => ({
              id: r.id,
              name: r.name,
              shortDescription: { text: r.short },
              fullDescription: { text: r.full },
              defaultConfiguration: { level: r.level },
            })),
          },
        },
        originalUriBaseIds: { [SOURCE_ROOT_ID]: { uri: rootUri } },
        columnKind: 'utf16CodeUnits',
        results: report.pairs.flatMap((pair) => [...resultsOf(pair), ...gapResults(pair)]),
      },
    ],
  };
}

function resultsOf(pair: OpResult): Record<string, unknown>[] {
  if (pair.verdict === 'pass') return [];
  const problems = pair.problems ?? [];
  if (pair.verdict === 'error' && problems.length > 0) {
    return problems.map((p) => result('annotation-problem', `${opName(pair)}: ${p.message}`, pair, p.line, p.column, p.endLine, p.endColumn));
  }
  const ruleId = pair.verdict === 'mismatch' ? 'gradient-mismatch' : pair.verdict === 'error' ? 'check-error' : isUnfinished(pair) ? 'check-unfinished' : 'check-inconclusive';
  return [result(ruleId, messageOf(pair), pair, pair.line, columnOf(pair))];
}

/** One note per code gap, at the gap's own place. */
function gapResults(pair: OpResult): Record<string, unknown>[] {
  const c = pair.coverage;
  if (!c || !c.collected) return [];
  return c.gaps.map((gap) => {
    const text = `${opName(pair)}: ${gapSentence(gap)}.${gap.reach ? ` It ${gap.reach}.` : ''}`;
    const r = result('unreached-code', text, { ...pair, file: gap.file }, gap.startLine, gap.startColumn, gap.endLine, gap.endColumn);
    (r['properties'] as Record<string, unknown>)['side'] = gap.side;
    return r;
  });
}

function result(ruleId: string, text: string, pair: OpResult, line: number, column: number, endLine?: number, endColumn?: number): Record<string, unknown> {
  const ruleIndex = SARIF_RULES.findIndex((r) => r.id === ruleId);
  const region: Record<string, number> = { startLine: Math.max(1, line), startColumn: Math.max(1, column) };
  if (endLine !== undefined && endLine >= region['startLine']!) region['endLine'] = endLine;
  if (endColumn !== undefined && endLine !== undefined) region['endColumn'] = endColumn;
  const properties: Record<string, unknown> = { verdict: pair.verdict, seed: pair.seed };
  if (pair.forward !== null) properties['forward'] = pair.forward;
  if (pair.backward !== null) properties['backward'] = pair.backward;
  if (pair.kind !== undefined) properties['kind'] = pair.kind;
  // Why an error could not be checked, as the JSON report's field (a property bag is free-form, SARIF 2.1.0 §3.8).
  if (pair.failure !== undefined) properties['failure'] = pair.failure;
  const out: Record<string, unknown> = {
    ruleId,
    ruleIndex,
    level: SARIF_RULES[ruleIndex]!.level,
    message: { text },
    locations: [{ physicalLocation: { artifactLocation: artifactLocation(pair.file), region } }],
    properties,
  };
  if (pair.thrownAt) {
    // Where the op's own code threw (SARIF 2.1.0 §3.27.22 relatedLocations).
    const at = pair.thrownAt;
    out['relatedLocations'] = [
      {
        id: 0,
        message: { text: 'thrown here' },
        physicalLocation: { artifactLocation: artifactLocation(at.file), region: { startLine: Math.max(1, at.line), startColumn: Math.max(1, at.column) } },
      },
    ];
  }
  return out;
}

/** Relative paths hang off the source root; absolute ones (another drive) become file URIs. */
function artifactLocation(file: string): Record<string, string> {
  if (/^([a-zA-Z]:)?\//.test(file)) return { uri: pathToFileURL(file).href };
  return { uri: file.split('/').map(encodeURIComponent).join('/'), uriBaseId: SOURCE_ROOT_ID };
}

function messageOf(pair: OpResult): string {
  const parts: string[] = [];
  const param = worstParam(pair);
  if (pair.verdict === 'mismatch' && param && pair.kind !== undefined && pair.kind !== 'backward') {
    // The message of a Jacobian, tangent or Hessian names the wrong entry or output.
    parts.push(`${opName(pair)}: the ${pair.kind} disagrees with finite differences (max relative error ${formatRelError(paramRelError(param))}).`);
    parts.push(...param.hints.map((h) => `Hint: ${h}.`));
  } else if (pair.verdict === 'mismatch' && param) {
    // With an element named, the figure is that element's own relative error (one rule: model/types.ts WorstElement).
    let text = `${opName(pair)}: gradient of ${param.name} disagrees with finite differences (max relative error ${formatRelError(paramRelError(param))}`;
    const w = param.worst;
    if (w) text += `${w.index.length > 0 ? ` at ${formatIndex(w.index)}` : ''}: backward ${formatNumber(w.analytic)}, numeric ${formatNumber(w.numeric)}`;
    parts.push(`${text}).`);
    parts.push(...param.hints.map((h) => `Hint: ${h}.`));
  } else {
    parts.push(`${opName(pair)}: ${pair.verdict}.`);
  }
  if (pair.message) parts.push(pair.message);
  parts.push(...pair.hints.map((h) => `Hint: ${h}.`));
  parts.push(`Seed ${pair.seed}.`);
  return parts.join(' ');
}

function opName(pair: OpResult): string {
  return pair.forward ?? pair.file;
}

/** The forward name's column when the checker reports one (an optional extra field), else 1. */
function columnOf(pair: OpResult): number {
  const column = (pair as OpResult & { column?: unknown }).column;
  return typeof column === 'number' && column >= 1 ? column : 1;
}
