// Code lenses above every annotated op: the verdict, in the CLI's words (`pass`, `mismatch`,
// `inconclusive`, `error`), with its figure (worst parameter, max relative error, time) or "checking…" while it runs — clicking re-checks the op — and one
// more that opens the op's report. Above a backward declared in the same file, a lens leads
// back to the forward it belongs to.

import type { CodeLens } from 'vscode-languageserver';
import { formatRelError, formatTime, oneLine, paramRelError, worstParam } from '../present/format';
import type { DocumentFacts } from './documentFacts';
import { opNameRange, toRange } from './format';
import { opStanding } from './opStanding';
import { ClientCommands, ServerCommands } from './protocol';

export function codeLensesFor(facts: DocumentFacts): CodeLens[] {
  const { snapshot } = facts;
  const lenses: CodeLens[] = [];
  for (const op of snapshot.ops) {
    const range = opNameRange(op, snapshot.lines);
    const args = [snapshot.uri, op.forward];
    const recheck = (title: string): CodeLens => ({ range, command: { title, command: ServerCommands.recheck, arguments: args } });
    const standing = opStanding(op, facts);
    if (!standing.may) {
      const title =
        standing.code === 'annotation-error'
          ? `Gradient Probe: annotation error — ${oneLine(op.problems[0]!.message, 80)}`
          : `Gradient Probe: not checked — ${oneLine(standing.reason, 80)}`;
      lenses.push({ range, command: { title, command: '' } });
      continue;
    }
    if (facts.isRunning(op.forward)) {
      lenses.push({ range, command: { title: 'Gradient Probe: checking…', command: '' } });
      continue;
    }
    const result = facts.latest(op.forward);
    if (!result) {
      lenses.push(recheck('Gradient Probe: not checked yet — check now'));
      continue;
    }
    const p = worstParam(result);
    // Several derivatives of one forward share its line: each lens names its own kind.
    // The verdict words of the CLI; a derivative other than the backward is named before them.
    const kindWord = op.kind !== undefined && op.kind !== 'backward' ? `${op.kind} ` : '';
    // Checks in the isolated interpreter say so: they are slower and limited to small ops.
    const time = `${formatTime(result.elapsedMs)}${result.isolation === 'interpreter' ? ' · isolated interpreter' : ''}`;
    switch (result.verdict) {
      case 'pass':
        lenses.push(recheck(`✓ ${kindWord}pass${p ? ` · worst ${p.name} ${formatRelError(paramRelError(p))} rel` : ''} · ${time}`));
        break;
      case 'mismatch':
        lenses.push(recheck(`✗ ${kindWord}mismatch${p ? ` · ${p.name} ${formatRelError(paramRelError(p))} rel` : ''} · ${time}`));
        break;
      case 'inconclusive':
        lenses.push(recheck(`? inconclusive · ${oneLine(result.message, 60)} · ${time}`));
        break;
      case 'error':
        lenses.push(recheck(`! error · ${oneLine(result.message, 60)}${result.isolation === 'interpreter' ? ' · isolated interpreter' : ''}`));
        break;
    }
    lenses.push({ range, command: { title: 'report', command: ClientCommands.openReport, arguments: args } });
  }
  for (const op of snapshot.ops) {
    const loc = op.backwardLocation;
    if (!loc || loc.file !== snapshot.fsPath) continue;
    const at = opNameRange(op, snapshot.lines).start;
    lenses.push({
      range: toRange(loc, undefined, snapshot.lines),
      // The forward's own name: an op's display name also carries its kind (`reach @jacobian`).
      command: { title: `${op.kind ?? 'backward'} of ${op.forward.replace(/ @\w+$/, '')}`, command: ClientCommands.goToOp, arguments: [snapshot.uri, at.line, at.character] },
    });
  }
  return lenses;
}
