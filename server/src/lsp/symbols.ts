// Ops as symbols: in a document's outline (one entry per op, "forward → backward", with its
// latest verdict) and in the workspace symbol search, so an op can be found by name.

import { SymbolKind, type DocumentSymbol, type SymbolInformation } from 'vscode-languageserver';
import type { DocumentFacts } from './documentFacts';
import { opNameRange } from './format';
import type { FileOps } from './protocol';

export function documentSymbolsFor(facts: DocumentFacts): DocumentSymbol[] {
  const { snapshot } = facts;
  return snapshot.ops.map((op) => {
    const range = opNameRange(op, snapshot.lines);
    const result = facts.latest(op.forward);
    const state = op.problems.length > 0 ? 'annotation error' : result ? result.verdict : 'not checked';
    return {
      name: `${op.forward} → ${op.backward || '?'}`,
      detail: `gradient op${op.kind && op.kind !== 'backward' ? ` (${op.kind})` : ''} · ${state}`,
      kind: SymbolKind.Operator,
      range,
      selectionRange: range,
    };
  });
}

/** Ops whose forward name contains the query's letters in order (case-insensitive), as symbol search does. */
export function workspaceSymbolsFor(files: FileOps[], query: string): SymbolInformation[] {
  const q = query.toLowerCase();
  const out: SymbolInformation[] = [];
  for (const file of files) {
    for (const op of file.ops) {
      if (!subsequence(q, op.forward.toLowerCase())) continue;
      out.push({ name: op.forward, kind: SymbolKind.Operator, containerName: `gradient op · ${op.state}`, location: { uri: file.uri, range: op.range } });
    }
  }
  return out;
}

function subsequence(needle: string, hay: string): boolean {
  let i = 0;
  for (let j = 0; j < hay.length && i < needle.length; j++) if (hay[j] === needle[i]) i++;
  return i === needle.length;
}
