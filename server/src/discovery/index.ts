// Discovery: finds the annotated forward/backward pairs of one TypeScript source text and
// parses their tags into OpDescriptors, with every mistake placed at its line and column.
// One parse, no type checker: the language server calls this on every save.
import ts from 'typescript';
import type { OpDescriptor, Problem } from '../model/types';
import { buildOp } from './buildOp';
import { findForwardSites } from './forwardSites';
import { collectBindings } from './moduleBindings';
import { PositionMapper } from './positions';
import { readDocTags } from './tagText';

export { OP_TAG_NAMES, type OpTagName } from './tagNames';
export { DEFAULT_SAMPLE_RANGE } from './sampleTag';
export { MAX_SEED } from './otherTags';

export interface DiscoveryResult {
  ops: OpDescriptor[];
  /** Failures of the whole file (syntax errors): none of its ops can run. */
  fileProblems: Problem[];
}

/** Never throws: an internal failure becomes a file problem at line 1. */
export function discoverOps(fileName: string, text: string): DiscoveryResult {
  try {
    return discover(fileName, String(text));
  } catch (err) {
    const why = err instanceof Error ? err.message : String(err);
    return { ops: [], fileProblems: [{ line: 1, column: 1, message: `Gradient Probe could not read this file's annotations (internal error: ${why})` }] };
  }
}

/**
 * A word character followed by hyphens right before a comment's closing `*\/`. TypeScript
 * 6.0.3's JSDoc scanner loops forever on it (its hyphenated-identifier loop re-reads a stale
 * character once it reaches the comment's end: `/** a-*\/` hangs createSourceFile; found by the
 * hostile suite's fuzzing).
 */
const JSDOC_SCANNER_HANG = /([\p{ID_Continue}$\u200c\u200d])(-+)(?=\*\/)/gu;

/** The text the parser gets: the hang trigger's hyphens become spaces, so every offset stays the same. */
export function parserSafeText(text: string): string {
  return text.includes('-*/') ? text.replace(JSDOC_SCANNER_HANG, (_m, word: string, hyphens: string) => word + ' '.repeat(hyphens.length)) : text;
}

function discover(fileName: string, text: string): DiscoveryResult {
  const sf = ts.createSourceFile(fileName, parserSafeText(text), ts.ScriptTarget.Latest, true);
  const mapper = new PositionMapper(sf);
  const fileProblems = syntaxProblems(sf, mapper);
  // Without a tag character there is nothing to find; skip the walk (a common case on save).
  if (!text.includes('@')) return { ops: [], fileProblems };
  const bindings = collectBindings(sf);
  const ops: OpDescriptor[] = [];
  for (const site of findForwardSites(sf)) {
    const tags = readDocTags(text, site.docHost);
    if (tags.length === 0) continue;
    ops.push(...buildOp(site, tags, { fileName, bindings, mapper }));
  }
  ops.sort((a, b) => a.line - b.line || a.column - b.column);
  return { ops, fileProblems };
}

/**
 * The parser's own diagnostics. They are not in the compiler's public typings, but every
 * SourceFile carries them; without them a broken file would look like one with no ops.
 */
function syntaxProblems(sf: ts.SourceFile, mapper: PositionMapper): Problem[] {
  const diags = (sf as unknown as { parseDiagnostics?: readonly ts.Diagnostic[] }).parseDiagnostics ?? [];
  return diags.map((d) => {
    const start = d.start ?? 0;
    return mapper.problem({ start, end: start + (d.length ?? 0), message: ts.flattenDiagnosticMessageText(d.messageText, '\n') });
  });
}
