// From a backward to its forward: on the name of a function or method that an op's derivative
// tag names, the references are the tags that name it and the forwards they annotate. Works
// within one file, where discovery resolves the backward.

import type { Location, Position } from 'vscode-languageserver';
import type { DocumentSnapshot } from './documentFacts';
import { contains, opNameRange, toRange } from './format';

const DERIVATIVE_TAG_NAMES = new Set(['backward', 'jacobian', 'tangent', 'hessian']);

/** The ops whose backward is declared at the given position (the name under the cursor). */
export function opsOfBackwardAt(snapshot: DocumentSnapshot, position: Position): DocumentSnapshot['ops'] {
  return snapshot.ops.filter((op) => {
    const loc = op.backwardLocation;
    if (!loc || loc.file !== snapshot.fsPath) return false;
    return contains(toRange(loc, undefined, snapshot.lines), position);
  });
}

export function referencesAt(snapshot: DocumentSnapshot, position: Position): Location[] {
  const out: Location[] = [];
  for (const op of opsOfBackwardAt(snapshot, position)) {
    out.push({ uri: snapshot.uri, range: opNameRange(op, snapshot.lines) });
    for (const tag of op.tags) {
      if (DERIVATIVE_TAG_NAMES.has(tag.tag)) out.push({ uri: snapshot.uri, range: toRange(tag, { line: tag.endLine, column: tag.endColumn }, snapshot.lines) });
    }
  }
  return out;
}
