// Hover on one of our tag names in a JSDoc block (`@backward`, `@sample`, ...): what the tag
// does in one line and an example, the same wording as tag completion.

import { MarkupKind, type Hover, type Position } from 'vscode-languageserver';
import { SourceModel } from './sourceModel';
import { tagDoc, tagMarkdown } from './tagDocs';

/** The tag's explanation above the results hover of the same place (a `@sample` tag has both). */
export function withTagHover(tag: Hover | null, result: Hover | null): Hover | null {
  if (!tag || !result) return tag ?? result;
  const text = (h: Hover): string => (typeof h.contents === 'object' && 'value' in h.contents ? h.contents.value : '');
  return { ...(tag.range ? { range: tag.range } : {}), contents: { kind: MarkupKind.Markdown, value: `${text(tag)}\n\n---\n\n${text(result)}` } };
}

export function tagHoverAt(fileName: string, text: string, position: Position): Hover | null {
  const model = SourceModel.parse(fileName, text);
  const offset = model.offsetAt(position);
  const sm = model.siteWithDocAt(offset);
  if (!sm) return null;
  for (const raw of sm.tags) {
    if (offset < raw.nameSpan.start || offset > raw.nameSpan.end) continue;
    const doc = tagDoc(raw.name);
    if (doc) return { range: model.rangeOf(raw.nameSpan), contents: { kind: MarkupKind.Markdown, value: tagMarkdown(doc) } };
  }
  return null;
}
