// Coverage in the editor: hint-level diagnostics on the code of a checked backward (and the
// helpers it calls) that its check never ran, and the hover's line saying how much of it ran.

import { DiagnosticSeverity, DiagnosticTag, type Diagnostic } from 'vscode-languageserver';
import type { OpResult } from '../model/types';

/** Diagnostic code of unreached code. */
export const UNREACHED_CODE = 'unreached-code';

/**
 * One hint per gap of the op's backward side that lies in this document. `fsPath` is the
 * document's absolute path (gap files are absolute in the server).
 */
export function unreachedDiagnostics(result: OpResult, fsPath: string, source: string): Diagnostic[] {
  const c = result.coverage;
  if (!c || !c.collected) return [];
  const out: Diagnostic[] = [];
  for (const gap of c.gaps) {
    if (gap.side === 'forward' || gap.file !== fsPath) continue;
    const reach = gap.reach ? `; it ${gap.reach}` : '';
    out.push({
      range: {
        start: { line: gap.startLine - 1, character: gap.startColumn - 1 },
        end: { line: gap.endLine - 1, character: gap.endColumn - 1 },
      },
      severity: DiagnosticSeverity.Hint,
      // Rendered faded, like code the compiler knows is unused: this code was not tested.
      tags: [DiagnosticTag.Unnecessary],
      source,
      code: UNREACHED_CODE,
      message: `${result.forward ?? 'op'}: never reached during the check, so the check says nothing about it (${gap.what} in ${gap.function})${reach}`,
    });
  }
  return out;
}

/** The hover's coverage line (Markdown-safe text from our own words and counts only, plus gap places). */
export function coverageHoverLine(result: OpResult): string | undefined {
  const c = result.coverage;
  if (!c) return undefined;
  if (!c.collected) return `Coverage ${c.reason}.`;
  const b = c.backward;
  // A backward that is not code of the workspace (the library's gradient): say what ran of the forward.
  if (b.total === 0) return `Coverage: ${c.forward.run} of ${c.forward.total} blocks of the forward ran during the check.`;
  const gaps = c.gaps.filter((g) => g.side !== 'forward');
  const where =
    gaps.length === 0 ? 'all of it ran' : `never reached: ${gaps.map((g) => (g.endLine > g.startLine ? `lines ${g.startLine}–${g.endLine}` : `line ${g.startLine}`)).join(', ')}`;
  return `Backward coverage: ${b.run} of ${b.total} blocks ran during the check (${where}).`;
}
