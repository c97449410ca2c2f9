// Completion inside a forward's JSDoc: our tag names; after `@sample` the parameters (and
// `this.` fields) still without a sample, then spec forms with dimensions guessed from the
// TypeScript type; after a derivative tag the module's functions (the class's methods) whose
// parameter counts fit the call the check will make, and inside its argument list the forward's
// parameter names and the placeholders; after `@construct` / `@samples` the module's functions;
// after `@gradientField` the sampled parameters, then the class's unsampled fields.

import { CompletionItemKind, InsertTextFormat, MarkupKind, type CompletionItem, type Position, type Range } from 'vscode-languageserver';
import ts from 'typescript';
import { findMethod } from '../discovery/moduleBindings';
import { specFromType, specSnippet } from './specGuess';
import { arity, SourceModel, type SiteModel } from './sourceModel';
import { DERIVATIVE_TAGS, TAG_DOCS, tagMarkdown } from './tagDocs';

/** Spec forms offered after a parameter name, beside the guess (docs/annotations.md, "@sample PARAM SPEC"). */
const SPEC_FORMS: readonly { label: string; snippet: string; detail: string }[] = [
  { label: 'f64[…]', snippet: 'f64[${1:8}]', detail: 'float64 array (Float64Array)' },
  { label: 'f32[…]', snippet: 'f32[${1:8}]', detail: 'float32 array (Float32Array)' },
  { label: 'num[…]', snippet: 'num[${1:8}]', detail: 'nested number[] arrays' },
  { label: 'num', snippet: 'num', detail: 'one number' },
  { label: 'i32[…]', snippet: 'i32[${1:8}]', detail: 'int32 array, not differentiated' },
  { label: 'int', snippet: 'int', detail: 'one integer, not differentiated' },
  { label: '= JSON', snippet: '= ${1:0.5}', detail: 'an exact value, not differentiated' },
];

export function completionsAt(fileName: string, text: string, position: Position): CompletionItem[] {
  const model = SourceModel.parse(fileName, text);
  const offset = model.offsetAt(position);
  const sm = model.siteWithDocAt(offset);
  if (!sm) return [];
  // The current line of the comment up to the cursor, without its ` * ` prefix.
  const lineStart = text.lastIndexOf('\n', offset - 1) + 1;
  const before = text.slice(lineStart, offset).replace(/^\s*(\/\*\*|\*)?\s?/, '');
  const word = /[\w$.]*$/.exec(before)![0];
  const replace: Range = { start: { line: position.line, character: position.character - word.length }, end: position };

  const tagStart = /@(\w*)$/.exec(before);
  if (tagStart) {
    const tagRange: Range = { start: { line: position.line, character: position.character - tagStart[1]!.length }, end: position };
    return TAG_DOCS.map((doc, i) => ({
      label: `@${doc.name}`,
      filterText: doc.name,
      kind: CompletionItemKind.Keyword,
      detail: doc.example,
      documentation: { kind: MarkupKind.Markdown, value: tagMarkdown(doc) },
      sortText: String(i).padStart(2, '0'),
      insertTextFormat: InsertTextFormat.Snippet,
      textEdit: { range: tagRange, newText: doc.snippet },
    }));
  }
  const inTag = /@(\w+)\s+(.*)$/.exec(before);
  if (!inTag) return [];
  const tag = inTag[1]!;
  const rest = inTag[2]!;
  if (tag === 'sample') return sampleCompletions(sm, rest, replace);
  if ((DERIVATIVE_TAGS as readonly string[]).includes(tag)) return derivativeCompletions(model, sm, tag, rest, replace);
  if ((tag === 'construct' || tag === 'samples') && /^[\w$]*$/.test(rest)) return factoryCompletions(model, sm, replace);
  if (tag === 'gradientField') return gradientFieldCompletions(sm, rest, replace);
  if (tag === 'fixed' && /(^|,)\s*[\w$.]*$/.test(rest)) {
    return sm.params.map((p) => ({ label: p.name, kind: CompletionItemKind.Variable, textEdit: { range: replace, newText: p.name } }));
  }
  return [];
}

/** Parameter names and fields already drawn by a `@sample` tag of this block. */
function sampledNames(sm: SiteModel): Set<string> {
  const out = new Set<string>();
  for (const t of sm.tags) {
    if (t.name !== 'sample') continue;
    const target = /^\s*(this\s*\.\s*[\w$]+|[\w$]+)/.exec(t.body);
    if (target) out.add(target[1]!.replace(/\s+/g, ''));
  }
  return out;
}

function sampleCompletions(sm: SiteModel, rest: string, replace: Range): CompletionItem[] {
  if (/^[\w$.]*$/.test(rest)) {
    const taken = sampledNames(sm);
    const candidates = [...sm.params, ...sm.fields].filter((p) => !taken.has(p.name));
    return candidates.map((p, i) => {
      const g = specFromType(p.typeNode, p.initializer);
      return {
        label: p.name,
        kind: p.name.startsWith('this.') ? CompletionItemKind.Field : CompletionItemKind.Variable,
        detail: g ? `@sample ${p.name} ${g.spec}` : p.typeNode ? `${p.typeNode.getText()} (not a numeric type)` : 'no type written',
        sortText: `${g ? 0 : 1}${String(i).padStart(3, '0')}`,
        insertTextFormat: InsertTextFormat.Snippet,
        // The name and, when the type tells, the guessed spec with its sizes as tab stops.
        textEdit: { range: replace, newText: g ? `${p.name} ${specSnippet(g)}` : p.name },
      };
    });
  }
  const afterName = /^(this\s*\.\s*[\w$]+|[\w$]+)\s+([\w$[]*)$/.exec(rest);
  if (!afterName) return [];
  const name = afterName[1]!.replace(/\s+/g, '');
  const param = [...sm.params, ...sm.fields].find((p) => p.name === name);
  const g = param ? specFromType(param.typeNode, param.initializer) : undefined;
  const range: Range = { start: { line: replace.end.line, character: replace.end.character - afterName[2]!.length }, end: replace.end };
  const items: CompletionItem[] = [];
  if (g) {
    items.push({
      label: g.spec,
      kind: CompletionItemKind.Value,
      detail: g.sized ? `from the type of ${name}` : `from the type of ${name}; sizes are a guess`,
      preselect: true,
      sortText: '0',
      insertTextFormat: InsertTextFormat.Snippet,
      textEdit: { range, newText: specSnippet(g) },
    });
  }
  SPEC_FORMS.forEach((form, i) =>
    items.push({
      label: form.label,
      kind: CompletionItemKind.Value,
      detail: form.detail,
      sortText: `1${i}`,
      filterText: form.label.replace('[…]', ''),
      insertTextFormat: InsertTextFormat.Snippet,
      textEdit: { range, newText: form.snippet },
    }),
  );
  return items;
}

/** How many arguments the check passes by default for this kind (docs/annotations.md, "@backward NAME" and "Other derivative kinds"). */
function defaultArgCount(kind: string, sm: SiteModel): number {
  const n = sm.params.length;
  if (sm.site.kind === 'method') return kind === 'tangent' ? n + 1 : 1;
  if (kind === 'backward') return n + 1;
  if (kind === 'tangent') return 2 * n;
  return n;
}

function derivativeCompletions(model: SourceModel, sm: SiteModel, kind: string, rest: string, replace: Range): CompletionItem[] {
  const list = /^[\w$]+\s*\(([^)]*)$/.exec(rest);
  if (list) return argumentCompletions(sm, kind, list[1]!, replace);
  if (!/^[\w$]*$/.test(rest)) return [];
  const wanted = defaultArgCount(kind, sm);
  // An explicit list can pass every parameter, the fields and the placeholders.
  const most = sm.params.length + sm.fields.length + (kind === 'tangent' ? sm.params.length : 2);
  const items: CompletionItem[] = [];
  const offer = (name: string, fn: ts.SignatureDeclaration, isMethod: boolean): void => {
    if (name === sm.site.name && isMethod === (sm.site.kind === 'method')) return;
    const { required, max } = arity(fn);
    const fitsDefault = required <= wanted && wanted <= max;
    if (!fitsDefault && required > most) return;
    const signature = `(${fn.parameters.map((p) => p.getText()).join(', ')})`;
    items.push({
      label: name,
      kind: isMethod ? CompletionItemKind.Method : CompletionItemKind.Function,
      detail: `${isMethod ? 'method ' : ''}${name}${signature.length > 80 ? '(…)' : signature}`,
      documentation: fitsDefault ? `Takes the default ${wanted} argument(s) of @${kind}.` : `Needs an argument list: @${kind} ${name}(…).`,
      // Fitting the default call first, then names that mention the forward.
      sortText: `${fitsDefault ? 0 : 1}${name.toLowerCase().includes(sm.site.name.toLowerCase()) ? 0 : 1}${name}`,
      textEdit: { range: replace, newText: name },
    });
  };
  if (sm.site.kind === 'method' && sm.site.classNode) {
    for (const m of sm.site.classNode.members) {
      if (!ts.isMethodDeclaration(m) || !ts.isIdentifier(m.name)) continue;
      const found = findMethod(sm.site.classNode, m.name.text, model.bindings);
      if (found.found && found.fn) offer(m.name.text, found.fn, true);
    }
  }
  for (const [name, b] of model.bindings.topLevel) {
    if (b.kind === 'function' && b.fn) offer(name, b.fn, false);
  }
  return items;
}

function argumentCompletions(sm: SiteModel, kind: string, written: string, replace: Range): CompletionItem[] {
  const listed = new Set(
    written
      .split(',')
      .slice(0, -1)
      .map((a) => a.trim()),
  );
  const items: CompletionItem[] = [];
  const add = (label: string, detail: string, itemKind: CompletionItemKind, order: number): void => {
    if (listed.has(label)) return;
    items.push({ label, detail, kind: itemKind, sortText: `${order}${label}`, textEdit: { range: replace, newText: label } });
  };
  for (const p of sm.params) add(p.name, 'forward parameter', CompletionItemKind.Variable, 0);
  const sampled = sampledNames(sm);
  for (const f of sm.fields) if (sampled.has(f.name)) add(f.name, 'sampled field', CompletionItemKind.Field, 1);
  if (kind === 'backward') {
    add('$y', "the forward's output at the sample point", CompletionItemKind.Constant, 2);
    add('$dy', 'the upstream gradient, shaped like the output', CompletionItemKind.Constant, 2);
  } else if (kind === 'tangent') {
    for (const p of sm.params) add(`$d${p.name}`, `the tangent of ${p.name}`, CompletionItemKind.Constant, 2);
  } else if (kind === 'hessian') {
    add('$v', 'the vector of a Hessian-vector product', CompletionItemKind.Constant, 2);
  }
  return items;
}

/** After `@gradientField`: the sampled parameters and fields, then the class's other fields (where the gradient is left). */
function gradientFieldCompletions(sm: SiteModel, rest: string, replace: Range): CompletionItem[] {
  const sampled = sampledNames(sm);
  if (/^[\w$.]*$/.test(rest)) {
    return [...sm.params, ...sm.fields]
      .filter((p) => sampled.has(p.name))
      .map((p) => ({
        label: p.name,
        kind: CompletionItemKind.Variable,
        detail: 'parameter whose gradient the backward leaves in a field',
        textEdit: { range: replace, newText: p.name },
      }));
  }
  if (!/^(this\s*\.\s*[\w$]+|[\w$]+)\s+[\w$.]*$/.test(rest)) return [];
  return sm.fields
    .filter((f) => !sampled.has(f.name))
    .map((f) => ({
      label: f.name,
      kind: CompletionItemKind.Field,
      detail: 'field holding the gradient (zeroed before each backward call)',
      textEdit: { range: replace, newText: f.name },
    }));
}

function factoryCompletions(model: SourceModel, sm: SiteModel, replace: Range): CompletionItem[] {
  const items: CompletionItem[] = [];
  for (const [name, b] of model.bindings.topLevel) {
    if ((b.kind !== 'function' && b.kind !== 'import') || name === sm.site.name) continue;
    items.push({ label: name, kind: b.kind === 'import' ? CompletionItemKind.Reference : CompletionItemKind.Function, textEdit: { range: replace, newText: name } });
  }
  return items;
}
