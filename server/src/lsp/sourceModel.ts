// One parse of a document for the writing features (completion, quick fixes, definitions, tag
// hovers): the declarations discovery would read, their JSDoc blocks, parameters with their
// TypeScript types, class fields, and the module's bindings. Reuses discovery's site finder and
// binding table so the editor offers exactly what the check will accept.

import ts from 'typescript';
import { parserSafeText } from '../discovery/index';
import { findForwardSites, type ForwardSite } from '../discovery/forwardSites';
import { collectBindings, type ModuleBindings } from '../discovery/moduleBindings';
import type { Span } from '../discovery/positions';
import { readDocTags, type RawTag } from '../discovery/tagText';

export interface ParamInfo {
  /** `x`, or `this.weight` for a field of the class. */
  name: string;
  /** The written type (`Float64Array`), or undefined when not annotated. */
  typeNode?: ts.TypeNode;
  /** A default value or field initializer, which may tell the shape (`new Float64Array(8)`). */
  initializer?: ts.Expression;
}

/** A declaration that is, or could become, an op, with its JSDoc. */
export interface SiteModel {
  site: ForwardSite;
  /** The JSDoc block right above it, when there is one. */
  doc?: ts.JSDoc;
  /** The tags of that block as discovery reads them. */
  readonly tags: RawTag[];
  readonly params: ParamInfo[];
  /** Non-function fields of the class, for a method (as `this.NAME`). */
  readonly fields: ParamInfo[];
  /** The statement (or class member) to insert around: a stub goes after it, a JSDoc before. */
  declaration: ts.Node;
}

/** Parsed texts kept for reuse: one per open editor the user switches between (our choice). */
const RECENT_MODELS = 4;
const recent: SourceModel[] = [];

export class SourceModel {
  readonly sf: ts.SourceFile;
  readonly bindings: ModuleBindings;
  readonly sites: SiteModel[];

  private constructor(
    readonly fileName: string,
    readonly text: string,
  ) {
    this.sf = ts.createSourceFile(fileName, parserSafeText(text), ts.ScriptTarget.Latest, true);
    this.bindings = collectBindings(this.sf);
    this.sites = findForwardSites(this.sf).map((site) => siteModel(site, text));
  }

  /**
   * The model of a text, reused while the text is unchanged: an editor asks for code actions on
   * every cursor move and for hovers on every pause, each time of the same text.
   */
  static parse(fileName: string, text: string): SourceModel {
    const hit = recent.find((m) => m.fileName === fileName && m.text === text);
    if (hit) return hit;
    const model = new SourceModel(fileName, text);
    recent.unshift(model);
    if (recent.length > RECENT_MODELS) recent.pop();
    return model;
  }

  offsetAt(position: { line: number; character: number }): number {
    const lineCount = this.sf.getLineStarts().length;
    if (position.line >= lineCount) return this.text.length;
    return Math.min(this.sf.getPositionOfLineAndCharacter(position.line, 0) + position.character, this.text.length);
  }

  positionAt(offset: number): { line: number; character: number } {
    return this.sf.getLineAndCharacterOfPosition(Math.max(0, Math.min(offset, this.text.length)));
  }

  rangeOf(span: Span): { start: { line: number; character: number }; end: { line: number; character: number } } {
    return { start: this.positionAt(span.start), end: this.positionAt(span.end) };
  }

  /** The site whose JSDoc block holds the offset (the cursor is inside `/** ... *\/`). */
  siteWithDocAt(offset: number): SiteModel | undefined {
    return this.sites.find((s) => s.doc && offset > s.doc.pos && offset < s.doc.end);
  }

  /** The site whose declaration (or its JSDoc) covers the offset. */
  siteAt(offset: number): SiteModel | undefined {
    let best: SiteModel | undefined;
    for (const s of this.sites) {
      const start = s.doc ? s.doc.pos : s.declaration.getStart();
      if (offset >= start && offset <= s.declaration.getEnd() && (!best || start >= (best.doc?.pos ?? best.declaration.getStart()))) best = s;
    }
    return best;
  }

  /** The site whose forward name spans exactly this range start (an op's line and column). */
  siteNamedAt(offset: number): SiteModel | undefined {
    return this.sites.find((s) => s.site.nameSpan.start === offset);
  }
}

/**
 * A site with its JSDoc found at once (to locate the cursor) and the rest read on first use: a
 * request needs the details of one or two sites, not of every declaration in the file.
 */
function siteModel(site: ForwardSite, text: string): SiteModel {
  const docs = ts.getJSDocCommentsAndTags(site.docHost).filter((d): d is ts.JSDoc => ts.isJSDoc(d));
  const doc = docs[docs.length - 1];
  // A variable's JSDoc sits on its statement: insert around the statement, not the declarator.
  let declaration: ts.Node = site.docHost;
  if (ts.isVariableDeclaration(declaration) && ts.isVariableDeclarationList(declaration.parent) && ts.isVariableStatement(declaration.parent.parent))
    declaration = declaration.parent.parent;
  let tags: RawTag[] | undefined;
  let params: ParamInfo[] | undefined;
  let fields: ParamInfo[] | undefined;
  return {
    site,
    ...(doc ? { doc } : {}),
    declaration,
    get tags() {
      return (tags ??= readDocTags(text, site.docHost));
    },
    get params() {
      return (params ??= paramsOf(site));
    },
    get fields() {
      return (fields ??= fieldsOf(site));
    },
  };
}

function paramsOf(site: ForwardSite): ParamInfo[] {
  const params: ParamInfo[] = [];
  for (const p of site.fn?.parameters ?? []) {
    if (!ts.isIdentifier(p.name) || p.name.text === 'this' || p.dotDotDotToken) continue;
    params.push({ name: p.name.text, ...(p.type ? { typeNode: p.type } : {}), ...(p.initializer ? { initializer: p.initializer } : {}) });
  }
  return params;
}

function fieldsOf(site: ForwardSite): ParamInfo[] {
  const fields: ParamInfo[] = [];
  if (site.kind !== 'method' || !site.classNode) return fields;
  for (const m of site.classNode.members) {
    if (!ts.isPropertyDeclaration(m) || !ts.isIdentifier(m.name)) continue;
    if ((ts.getCombinedModifierFlags(m) & ts.ModifierFlags.Static) !== 0) continue;
    if (m.initializer && (ts.isArrowFunction(m.initializer) || ts.isFunctionExpression(m.initializer))) continue;
    fields.push({ name: `this.${m.name.text}`, ...(m.type ? { typeNode: m.type } : {}), ...(m.initializer ? { initializer: m.initializer } : {}) });
  }
  return fields;
}

/** Parameter counts a function accepts: required ones, and at most (Infinity with a rest parameter). */
export function arity(fn: ts.SignatureDeclaration): { required: number; max: number } {
  let required = 0;
  let max = 0;
  for (const p of fn.parameters) {
    if (ts.isIdentifier(p.name) && p.name.text === 'this') continue;
    if (p.dotDotDotToken) return { required, max: Number.POSITIVE_INFINITY };
    max++;
    if (!p.questionToken && !p.initializer) required++;
  }
  return { required, max };
}

/** The indentation of the line an offset is on. */
export function indentAt(text: string, offset: number): string {
  const lineStart = text.lastIndexOf('\n', offset - 1) + 1;
  return /^[ \t]*/.exec(text.slice(lineStart))![0];
}
