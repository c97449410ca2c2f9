// Hover on a forward's name or on one of its `@sample` tags: a Markdown table per parameter
// (name, shape, max absolute and relative error, worst index, backward vs numeric there,
// method), the hints and the seed, so a result can be read and reproduced where the code is.

import { MarkupKind, type Hover, type Position } from 'vscode-languageserver';
import { backwardArgText } from '../discovery/backwardSignature';
import type { OpDescriptor, ParamResult } from '../model/types';
import { coverageHoverLine } from './coverageMarks';
import { formatIndex, formatNumber, formatRelError, formatShape, formatTime, NO_FIGURE } from '../present/format';
import type { DocumentFacts } from './documentFacts';
import { contains, opNameRange, toRange } from './format';
import { opStanding } from './opStanding';

export function hoverAt(facts: DocumentFacts, position: Position): Hover | null {
  const { snapshot } = facts;
  // One forward may carry several derivatives (@backward, @jacobian, @tangent, @hessian): each
  // is an op at the same name and tags, and the hover shows them all, one section each.
  const siblings = (op: OpDescriptor): OpDescriptor[] => snapshot.ops.filter((o) => o.line === op.line && o.column === op.column);
  const joined = (ops: OpDescriptor[], onlyParam?: string): string => ops.map((o) => opMarkdown(o, facts, onlyParam)).join('\n\n---\n\n');
  for (const op of snapshot.ops) {
    const nameRange = opNameRange(op, snapshot.lines);
    if (contains(nameRange, position)) return { range: nameRange, contents: { kind: MarkupKind.Markdown, value: joined(siblings(op)) } };
    for (const tag of op.tags) {
      if (tag.tag !== 'sample') continue;
      const range = toRange(tag, { line: tag.endLine, column: tag.endColumn }, snapshot.lines);
      if (contains(range, position)) {
        return { range, contents: { kind: MarkupKind.Markdown, value: joined(siblings(op), tag.param) } };
      }
    }
  }
  return null;
}

/** The hover text; `onlyParam` narrows the table to the parameter a `@sample` tag draws. */
export function opMarkdown(op: OpDescriptor, facts: DocumentFacts, onlyParam?: string): string {
  const call = op.backwardArgsFromNames ? `${op.backward}(${op.backwardArgs.map(backwardArgText).join(', ')})` : op.backward;
  const head = `**${escape(op.forward)}** → ${op.kind ?? 'backward'} \`${call}\`${op.backwardArgsFromNames ? ' (called as its parameter names say)' : ''}`;
  const standing = opStanding(op, facts);
  if (!standing.may && standing.code === 'annotation-error') {
    return [head, '', 'Annotation errors (nothing runs until they are fixed):', '', ...op.problems.map((p) => `- line ${p.line}: ${escape(p.message)}`)].join('\n');
  }
  if (!standing.may) return [head, '', `Not checked: ${escape(standing.reason)}.`].join('\n');
  const result = facts.latest(op.forward);
  const running = facts.isRunning(op.forward);
  if (!result) return [head, '', running ? 'checking…' : 'Not checked yet: save the file or click the lens.'].join('\n');
  const lines = [
    `${head} — **${result.verdict}** · seed ${result.seed} · ${formatTime(result.elapsedMs)}${result.isolation === 'interpreter' ? ' · isolated interpreter' : ''}${running ? ' · re-checking…' : ''}`,
    '',
  ];
  if (result.message && result.verdict !== 'pass') lines.push(escape(result.message), '');
  const params = onlyParam === undefined ? result.params : result.params.filter((p) => p.name === onlyParam);
  if (params.length > 0) {
    lines.push(
      '| parameter | shape | verdict | max abs error | max rel error | worst at | backward | numeric | method |',
      '| --- | --- | --- | ---: | ---: | --- | ---: | ---: | --- |',
      ...params.map(row),
      '',
    );
  } else if (onlyParam !== undefined) {
    lines.push(`\`${escape(onlyParam)}\` is not differentiated (fixed or a literal).`, '');
  }
  // Detection floor: the smallest relative error in one element the check catches with p ≥ 0.99.
  const floors = params.filter((p) => typeof p.detectionFloor === 'number').map((p) => `${escape(p.name)} ${formatRelError(p.detectionFloor)}`);
  if (floors.length > 0) lines.push(`Detection floor (smallest single-element relative error caught, p ≥ 0.99): ${floors.join(', ')}`, '');
  const hints = [...(onlyParam === undefined ? result.hints : []), ...params.flatMap((p) => p.hints.map((h) => `${p.name}: ${h}`))];
  if (hints.length > 0) lines.push('Hints:', '', ...hints.map((h) => `- ${escape(h)}`), '');
  const coverage = coverageHoverLine(result);
  if (coverage) lines.push(escape(coverage), '');
  lines.push(`Reproduce with seed ${result.seed}${op.seed !== undefined ? ' (the op’s @seed)' : ''}.`);
  return lines.join('\n');
}

function row(p: ParamResult): string {
  const checked = p.checkedElements < p.elements ? ` (${p.checkedElements}/${p.elements} el.)` : '';
  return `| ${escape(p.name)} | ${formatShape(p)} | ${p.verdict} | ${formatRelError(p.maxAbsError)} | ${formatRelError(p.maxRelError)} | ${p.worst ? formatIndex(p.worst.index) : NO_FIGURE} | ${formatNumber(p.worst?.analytic)} | ${formatNumber(p.worst?.numeric)} | ${p.method}${checked} |`;
}

/** Markdown's special characters in user-controlled text (names, messages). */
function escape(text: string): string {
  return text.replace(/[\\`*_{}[\]<>|#]/g, (c) => `\\${c}`);
}
