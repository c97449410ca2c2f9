// Go to definition from a JSDoc tag: the name after `@backward` (and `@jacobian`, `@tangent`,
// `@hessian`) goes to that function or method, the name after `@construct` / `@samples` to the
// factory. A name imported from another file of the project goes to its declaration there.

import { pathToFileURL } from 'node:url';
import { readFileSync } from 'node:fs';
import ts from 'typescript';
import type { Location, Position } from 'vscode-languageserver';
import { findMethod } from '../discovery/moduleBindings';
import { parseBackwardTag, parseNameTag } from '../discovery/otherTags';
import type { Span } from '../discovery/positions';
import { SourceModel, type SiteModel } from './sourceModel';
import { DERIVATIVE_TAGS } from './tagDocs';

/** The tag name under an offset inside a site's JSDoc, and the name its body refers to there. */
export interface TagReference {
  tag: string;
  name: string;
  span: Span;
}

/** Which function name of a tag body covers the offset, if any. */
export function tagReferenceAt(sm: SiteModel, offset: number): TagReference | undefined {
  for (const raw of sm.tags) {
    if (offset < raw.span.start || offset > raw.span.end) continue;
    if ((DERIVATIVE_TAGS as readonly string[]).includes(raw.name)) {
      const parsed = parseBackwardTag(raw);
      if (parsed.name && parsed.nameSpan && offset >= parsed.nameSpan.start && offset <= parsed.nameSpan.end) return { tag: raw.name, name: parsed.name, span: parsed.nameSpan };
    } else if (raw.name === 'construct' || raw.name === 'samples') {
      const parsed = parseNameTag(raw, 'a function');
      if (parsed.name && parsed.span && offset >= parsed.span.start && offset <= parsed.span.end) return { tag: raw.name, name: parsed.name, span: parsed.span };
    }
  }
  return undefined;
}

export function definitionAt(fileName: string, text: string, position: Position): Location | null {
  const model = SourceModel.parse(fileName, text);
  const offset = model.offsetAt(position);
  const sm = model.siteWithDocAt(offset);
  if (!sm) return null;
  const ref = tagReferenceAt(sm, offset);
  if (!ref) return null;
  const uri = pathToFileURL(fileName).toString();
  // A derivative of a method is looked up on the class first, as the check does.
  if ((DERIVATIVE_TAGS as readonly string[]).includes(ref.tag) && sm.site.kind === 'method' && sm.site.classNode) {
    const m = findMethod(sm.site.classNode, ref.name, model.bindings);
    if (m.found) return { uri, range: model.rangeOf(m.span) };
  }
  const b = model.bindings.topLevel.get(ref.name);
  if (!b) return null;
  if (b.kind === 'import') return importedDeclaration(model, fileName, ref.name) ?? { uri, range: model.rangeOf(b.span) };
  return { uri, range: model.rangeOf(b.span) };
}

/** Follows `import { name } from './other'` to the declaration of `name` in that file (one hop). */
function importedDeclaration(model: SourceModel, fileName: string, localName: string): Location | undefined {
  for (const st of model.sf.statements) {
    if (!ts.isImportDeclaration(st) || !ts.isStringLiteral(st.moduleSpecifier)) continue;
    const named = st.importClause?.namedBindings;
    if (!named || !ts.isNamedImports(named)) continue;
    const el = named.elements.find((e) => e.name.text === localName);
    if (!el) continue;
    const exported = (el.propertyName ?? el.name).text;
    const resolved = ts.resolveModuleName(st.moduleSpecifier.text, fileName, { allowJs: true, moduleResolution: ts.ModuleResolutionKind.Node10 }, ts.sys).resolvedModule;
    if (!resolved || resolved.isExternalLibraryImport) return undefined;
    let targetText: string;
    try {
      targetText = readFileSync(resolved.resolvedFileName, 'utf8');
    } catch {
      return undefined;
    }
    const target = SourceModel.parse(resolved.resolvedFileName, targetText);
    const b = target.bindings.topLevel.get(exported);
    if (!b) return undefined;
    return { uri: pathToFileURL(resolved.resolvedFileName).toString(), range: target.rangeOf(b.span) };
  }
  return undefined;
}
