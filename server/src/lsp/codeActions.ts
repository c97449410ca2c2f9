// Quick fixes for the annotation problems the server reports (apply a did-you-mean, add the
// missing `@sample` lines with specs from the TypeScript types, create a missing backward as a
// stub with the signature the check will call), and "annotate as a gradient op" on an exported
// function with numeric parameters. Pure: text in, workspace edits out.

import ts from 'typescript';
import { CodeActionKind, type CodeAction, type Diagnostic, type Range, type TextEdit } from 'vscode-languageserver';
import type { OpDescriptor, ProblemFix } from '../model/types';
import { DIAGNOSTIC_SOURCE, DiagnosticCodes } from './diagnostics';
import { fixesFromData } from './problemFixes';
import { specFromType, GUESS_LENGTH } from './specGuess';
import { indentAt, SourceModel, type ParamInfo, type SiteModel } from './sourceModel';
import { TAG_DOCS } from './tagDocs';

export interface CodeActionInput {
  uri: string;
  fileName: string;
  text: string;
  /** The ops discovery found (for the backward's argument list and the drawn parameters). */
  ops: readonly OpDescriptor[];
  range: Range;
  diagnostics: readonly Diagnostic[];
}

export function codeActionsFor(input: CodeActionInput): CodeAction[] {
  const model = SourceModel.parse(input.fileName, input.text);
  const actions: CodeAction[] = [];
  const seen = new Set<string>();
  for (const d of input.diagnostics) {
    if (d.source !== DIAGNOSTIC_SOURCE || d.code !== DiagnosticCodes.annotation) continue;
    for (const fix of fixesFromData(d.data)) {
      const action = actionFor(fix, d, model, input);
      // One "add samples" or "create" per op, however many diagnostics ask for it.
      if (action && !seen.has(action.title)) {
        seen.add(action.title);
        actions.push(action);
      }
    }
  }
  const annotate = annotateAction(model, input);
  if (annotate) actions.push(annotate);
  return actions;
}

function edit(uri: string, edits: TextEdit[]): CodeAction['edit'] {
  return { changes: { [uri]: edits } };
}

function actionFor(fix: ProblemFix, d: Diagnostic, model: SourceModel, input: CodeActionInput): CodeAction | undefined {
  if (fix.kind === 'replace') {
    return { title: `Change to '${fix.text}'`, kind: CodeActionKind.QuickFix, diagnostics: [d], isPreferred: true, edit: edit(input.uri, [{ range: d.range, newText: fix.text }]) };
  }
  const sm = model.siteAt(model.offsetAt(d.range.start));
  if (!sm) return undefined;
  if (fix.kind === 'add-samples') {
    const missing = unsampled(sm);
    if (missing.length === 0 || !sm.doc) return undefined;
    const lines = missing.map((p) => `@sample ${p.name} ${specFromType(p.typeNode, p.initializer)?.spec ?? `f64[${GUESS_LENGTH}]`}`);
    return {
      title: `Add @sample for ${missing.map((p) => p.name).join(', ')}`,
      kind: CodeActionKind.QuickFix,
      diagnostics: [d],
      isPreferred: true,
      edit: edit(input.uri, [docLinesEdit(model, sm.doc, lines)]),
    };
  }
  const op = opOfSite(model, sm, input.ops);
  if (!op) return undefined;
  return {
    title: `Create ${sm.site.kind === 'method' ? 'method' : 'function'} '${fix.name}'`,
    kind: CodeActionKind.QuickFix,
    diagnostics: [d],
    edit: edit(input.uri, [stubEdit(model, sm, op, fix.name)]),
  };
}

/** Parameters of the forward that no `@sample` tag draws. */
function unsampled(sm: SiteModel): ParamInfo[] {
  const drawn = new Set<string>();
  for (const t of sm.tags) {
    if (t.name !== 'sample') continue;
    const m = /^\s*([\w$]+)/.exec(t.body);
    if (m) drawn.add(m[1]!);
  }
  return sm.params.filter((p) => !drawn.has(p.name));
}

function opOfSite(model: SourceModel, sm: SiteModel, ops: readonly OpDescriptor[]): OpDescriptor | undefined {
  const at = model.positionAt(sm.site.nameSpan.start);
  return ops.find((op) => op.line === at.line + 1 && op.column === at.character + 1);
}

/** Adds ` * LINE` lines at the end of a JSDoc block, in the block's own indentation. */
function docLinesEdit(model: SourceModel, doc: ts.JSDoc, lines: string[]): TextEdit {
  const text = model.text;
  const start = doc.getStart();
  const indent = indentAt(text, start);
  const close = text.lastIndexOf('*/', doc.end);
  const closeLineStart = text.lastIndexOf('\n', close - 1) + 1;
  if (/^[ \t]*$/.test(text.slice(closeLineStart, close)) && closeLineStart > start) {
    // The usual block: `*/` alone on its last line; the new lines go right above it.
    const at = model.positionAt(closeLineStart);
    return { range: { start: at, end: at }, newText: lines.map((l) => `${indent} * ${l}\n`).join('') };
  }
  // A one-line block `/** @backward f */`: break it open.
  let end = close;
  while (end > start && (text[end - 1] === ' ' || text[end - 1] === '\t')) end--;
  const at = model.positionAt(end);
  const closeAt = model.positionAt(close);
  return { range: { start: at, end: closeAt }, newText: `\n${lines.map((l) => `${indent} * ${l}\n`).join('')}${indent} ` };
}

/** The type text of a parameter, or a stand-in when none is written. */
function typeText(p: ParamInfo | undefined): string {
  if (p?.typeNode) return p.typeNode.getText();
  const g = p ? specFromType(undefined, p.initializer) : undefined;
  return g && g.dims.length === 0 ? 'number' : g?.dtype === 'f64' ? 'Float64Array' : g?.dtype === 'f32' ? 'Float32Array' : 'number';
}

/**
 * The stub of a missing derivative function: the parameters the check passes (op.backwardArgs:
 * forward parameters, `$y` → y, `$dy` → dy) typed like the forward, and a return type holding
 * one gradient per differentiated parameter (the type itself when there is only one).
 */
export function stubText(sm: SiteModel, op: OpDescriptor, name: string, indent: string): string {
  const fn = sm.site.fn;
  const all = [...sm.params, ...sm.fields];
  const outputType = fn?.type ? fn.type.getText() : typeText(sm.params[0]);
  const params = op.backwardArgs.map((a) => {
    if (a.kind === 'output') return `y: ${outputType}`;
    if (a.kind === 'upstream') return `dy: ${outputType}`;
    // @hessian's `$v` spans every differentiated input; @tangent's `$dNAME` is shaped like NAME.
    if (a.kind === 'vector') return 'v: Float64Array';
    const p = all.find((q) => q.name === a.name);
    const local = a.name.replace(/^this\./, '');
    return a.kind === 'tangent' ? `d${local}: ${typeText(p)}` : `${local}: ${typeText(p)}`;
  });
  const differentiated = op.params.filter((p) => {
    if (op.target.samplesFactory) return !op.fixed.includes(p.name);
    return p.sample?.kind === 'random' && !p.sample.fixed && !(p.sample.dtype === 'int' || p.sample.dtype === 'i32');
  });
  const fieldsOf = differentiated.map((p) => `${p.name.replace(/^this\./, '')}: ${typeText(all.find((q) => q.name === p.name))}`);
  const kind = op.kind ?? 'backward';
  // A backward returns one gradient per parameter, shaped like it; a Jacobian one row-major
  // matrix per parameter; a Hessian one matrix (or H·v); a tangent is shaped like the output.
  const perParam = kind === 'jacobian' ? differentiated.map((p) => `${p.name.replace(/^this\./, '')}: Float64Array`) : fieldsOf;
  const single = differentiated.length === 1 && !differentiated[0]!.isField;
  const returnType =
    kind === 'tangent'
      ? outputType
      : kind === 'hessian'
        ? 'Float64Array'
        : single
          ? kind === 'jacobian'
            ? 'Float64Array'
            : typeText(all.find((q) => q.name === differentiated[0]!.name))
          : `{ ${perParam.join('; ')} }`;
  const head = sm.site.kind === 'method' ? '' : isExported(sm) ? 'export function ' : 'function ';
  return [
    `${indent}${head}${name}(${params.join(', ')}): ${returnType} {`,
    `${indent}  // The gradient of ${op.forward} with respect to ${differentiated.map((p) => p.name).join(', ') || 'its parameters'}.`,
    `${indent}  throw new Error('${name}: not written yet');`,
    `${indent}}`,
  ].join('\n');
}

function isExported(sm: SiteModel): boolean {
  const decl = sm.declaration;
  return ts.canHaveModifiers(decl) && (ts.getModifiers(decl) ?? []).some((m) => m.kind === ts.SyntaxKind.ExportKeyword);
}

function stubEdit(model: SourceModel, sm: SiteModel, op: OpDescriptor, name: string): TextEdit {
  const end = sm.declaration.getEnd();
  const indent = indentAt(model.text, sm.declaration.getStart());
  const at = model.positionAt(end);
  return { range: { start: at, end: at }, newText: `\n\n${stubText(sm, op, name, indent)}` };
}

const OUR_TAGS = new Set(TAG_DOCS.map((t) => t.name));

/** "Annotate as a gradient op" on an exported top-level function with numeric parameters and no tags of ours. */
function annotateAction(model: SourceModel, input: CodeActionInput): CodeAction | undefined {
  const sm = model.siteAt(model.offsetAt(input.range.start));
  if (!sm || sm.site.kind !== 'function' || !sm.site.fn || !sm.site.name || sm.site.unsupported || !isExported(sm)) return undefined;
  if (sm.tags.some((t) => OUR_TAGS.has(t.name))) return undefined;
  const guesses = sm.params.map((p) => specFromType(p.typeNode, p.initializer));
  if (!guesses.some((g) => g !== undefined)) return undefined;
  const lines = [`@backward ${sm.site.name}Backward`, ...sm.params.map((p, i) => `@sample ${p.name} ${guesses[i]?.spec ?? `f64[${GUESS_LENGTH}]`}`)];
  let change: TextEdit;
  if (sm.doc) change = docLinesEdit(model, sm.doc, lines);
  else {
    const start = sm.declaration.getStart();
    const indent = indentAt(model.text, start);
    const lineStart = model.positionAt(start - indent.length);
    change = { range: { start: lineStart, end: lineStart }, newText: `${indent}/**\n${lines.map((l) => `${indent} * ${l}\n`).join('')}${indent} */\n` };
  }
  return { title: `Annotate '${sm.site.name}' as a gradient op`, kind: CodeActionKind.RefactorRewrite, edit: edit(input.uri, [change]) };
}
