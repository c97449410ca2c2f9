// The names a module declares at its top level (functions, consts, classes, imports) and the
// methods of its classes: what a `@backward`, `@samples` or `@construct` name can resolve to
// without a type checker.
import ts from 'typescript';
import type { Span } from './positions';

export type BindingKind = 'function' | 'variable' | 'import' | 'class' | 'other';

export interface Binding {
  kind: BindingKind;
  /** The declared name (or the import specifier's local name). */
  span: Span;
  /** The function node, when the binding is a function or a const bound to one. */
  fn?: ts.SignatureDeclaration;
}

/** Top-level bindings by name, and class declarations by name. */
export interface ModuleBindings {
  topLevel: Map<string, Binding>;
  classes: Map<string, ts.ClassDeclaration>;
}

function spanOf(node: ts.Node): Span {
  return { start: node.getStart(), end: node.getEnd() };
}

/** Strips parentheses and type assertions: `(x => x) as F` is still a function. */
export function unwrapExpression(e: ts.Expression): ts.Expression {
  let cur = e;
  while (ts.isParenthesizedExpression(cur) || ts.isAsExpression(cur) || ts.isSatisfiesExpression(cur) || ts.isTypeAssertionExpression(cur) || ts.isNonNullExpression(cur))
    cur = cur.expression;
  return cur;
}

export function collectBindings(sf: ts.SourceFile): ModuleBindings {
  const topLevel = new Map<string, Binding>();
  const classes = new Map<string, ts.ClassDeclaration>();
  // First declaration wins: an overload signature names the same function as its body.
  const add = (name: string, b: Binding) => {
    if (!topLevel.has(name)) topLevel.set(name, b);
  };
  const addPattern = (name: ts.BindingName, kind: BindingKind) => {
    if (ts.isIdentifier(name)) add(name.text, { kind, span: spanOf(name) });
    else for (const el of name.elements) if (!ts.isOmittedExpression(el)) addPattern(el.name, kind);
  };
  for (const st of sf.statements) {
    if (ts.isFunctionDeclaration(st) && st.name) add(st.name.text, { kind: 'function', span: spanOf(st.name), fn: st });
    else if (ts.isVariableStatement(st)) {
      for (const d of st.declarationList.declarations) {
        const init = d.initializer && unwrapExpression(d.initializer);
        if (ts.isIdentifier(d.name) && init && (ts.isArrowFunction(init) || ts.isFunctionExpression(init))) add(d.name.text, { kind: 'function', span: spanOf(d.name), fn: init });
        else addPattern(d.name, 'variable');
      }
    } else if (ts.isClassDeclaration(st) && st.name) {
      add(st.name.text, { kind: 'class', span: spanOf(st.name) });
      if (!classes.has(st.name.text)) classes.set(st.name.text, st);
    } else if (ts.isImportDeclaration(st) && st.importClause && !st.importClause.isTypeOnly) {
      const clause = st.importClause;
      if (clause.name) add(clause.name.text, { kind: 'import', span: spanOf(clause.name) });
      const nb = clause.namedBindings;
      if (nb && ts.isNamespaceImport(nb)) add(nb.name.text, { kind: 'import', span: spanOf(nb.name) });
      else if (nb) for (const el of nb.elements) if (!el.isTypeOnly) add(el.name.text, { kind: 'import', span: spanOf(el.name) });
    } else if (ts.isImportEqualsDeclaration(st) && !st.isTypeOnly) add(st.name.text, { kind: 'import', span: spanOf(st.name) });
    else if ((ts.isEnumDeclaration(st) || ts.isModuleDeclaration(st)) && ts.isIdentifier(st.name)) add(st.name.text, { kind: 'other', span: spanOf(st.name) });
  }
  return { topLevel, classes };
}

/**
 * A non-static method of the class: what the engine finds on the class prototype. (A field
 * holding a function lives on instances only, so it does not count.)
 */
function prototypeMethod(cls: ts.ClassLikeDeclaration, name: string): ts.MethodDeclaration | undefined {
  return cls.members.find((m): m is ts.MethodDeclaration => {
    if (!ts.isMethodDeclaration(m) || !ts.isIdentifier(m.name) || m.name.text !== name) return false;
    return (ts.getCombinedModifierFlags(m) & ts.ModifierFlags.Static) === 0;
  });
}

export type MethodLookup =
  | { found: true; span: Span; fn?: ts.SignatureDeclaration }
  /** Not in this class or its same-file ancestors, but it extends a class we cannot see. */
  | { found: false; unknownBase: boolean };

/** Looks a method up on a class, then on the classes it extends that are declared in this file. */
export function findMethod(cls: ts.ClassLikeDeclaration, name: string, bindings: ModuleBindings): MethodLookup {
  const seen = new Set<ts.ClassLikeDeclaration>();
  let cur: ts.ClassLikeDeclaration | undefined = cls;
  while (cur && !seen.has(cur)) {
    seen.add(cur);
    const m = prototypeMethod(cur, name);
    if (m) return { found: true, span: spanOf(m.name), fn: m };
    const ext: ts.ExpressionWithTypeArguments | undefined = cur.heritageClauses?.find((h) => h.token === ts.SyntaxKind.ExtendsKeyword)?.types[0];
    if (!ext) return { found: false, unknownBase: false };
    const base: ts.ClassDeclaration | undefined = ts.isIdentifier(ext.expression) ? bindings.classes.get(ext.expression.text) : undefined;
    if (!base) return { found: false, unknownBase: true };
    cur = base;
  }
  return { found: false, unknownBase: false };
}

/** Whether the class or a same-file ancestor has `#private` members (state a snapshot cannot see). */
export function declaresPrivateMembers(cls: ts.ClassLikeDeclaration, bindings: ModuleBindings): boolean {
  const seen = new Set<ts.ClassLikeDeclaration>();
  for (let cur: ts.ClassLikeDeclaration | undefined = cls; cur && !seen.has(cur);) {
    seen.add(cur);
    if (cur.members.some((m) => m.name !== undefined && ts.isPrivateIdentifier(m.name))) return true;
    const ext: ts.ExpressionWithTypeArguments | undefined = cur.heritageClauses?.find((h) => h.token === ts.SyntaxKind.ExtendsKeyword)?.types[0];
    cur = ext && ts.isIdentifier(ext.expression) ? bindings.classes.get(ext.expression.text) : undefined;
  }
  return false;
}
