// Finds the functions an op's tags name in its module — the backward or another derivative (on
// the class, the object literal, or at the top level) and the @samples/@construct factories —
// and says where each is missing, of the wrong kind, async or a generator.
import ts from 'typescript';
import type { DerivativeKind } from './derivativeTags';
import type { ForwardSite } from './forwardSites';
import { findMethod, unwrapExpression, type Binding, type ModuleBindings } from './moduleBindings';
import type { Span, SpanProblem } from './positions';
import { fixesField, suggestName } from './suggestion';

/** Kinds named in messages as the role of the function a tag names. */
export type Role = 'backward' | DerivativeKind;

/** 'async', 'a generator' or undefined for a plain function. */
export function functionFlavour(fn: ts.SignatureDeclaration): string | undefined {
  const mods = ts.canHaveModifiers(fn) ? ts.getModifiers(fn) : undefined;
  if (mods?.some((m) => m.kind === ts.SyntaxKind.AsyncKeyword)) return 'async';
  if ((ts.isFunctionDeclaration(fn) || ts.isFunctionExpression(fn) || ts.isMethodDeclaration(fn)) && fn.asteriskToken) return 'a generator';
  return undefined;
}

function bindingKindProblem(name: string, b: Binding, role: string): string | undefined {
  if (b.kind === 'class') return `${role} '${name}' is a class, not a function`;
  if (b.kind === 'other') return `${role} '${name}' is not a function`;
  const flavour = b.fn ? functionFlavour(b.fn) : undefined;
  if (flavour) return `${role} '${name}' is ${flavour}: it must return its result directly`;
  return undefined;
}

/** Factories must be top-level functions (or imports) of this module. */
export function checkTopLevelFunction(name: string, span: Span, role: string, bindings: ModuleBindings, problems: SpanProblem[]): void {
  const b = bindings.topLevel.get(name);
  if (!b) {
    const near = suggestName(name, [...bindings.topLevel.keys()]);
    problems.push({ ...span, message: `${role} '${name}' is not declared at the top level of this module or imported into it${near.hint}`, ...fixesField(near.fixes) });
    return;
  }
  const bad = bindingKindProblem(name, b, role);
  if (bad) problems.push({ ...span, message: bad });
}

/** Finds the backward: for a method, on the class first; then among the module's top-level names. */
export function resolveBackward(
  name: string,
  span: Span,
  site: ForwardSite,
  bindings: ModuleBindings,
  problems: SpanProblem[],
  role: Role = 'backward',
): { isMethod: boolean; span?: Span; fn?: ts.SignatureDeclaration } | undefined {
  let unknownBase = false;
  if (site.objectNode) {
    // A function of the same object literal, called on the object (like a method).
    for (const m of site.objectNode.properties) {
      if (!(ts.isMethodDeclaration(m) || ts.isPropertyAssignment(m)) || !ts.isIdentifier(m.name) || m.name.text !== name) continue;
      const fn = ts.isMethodDeclaration(m) ? m : unwrapExpression(m.initializer);
      if (!(ts.isMethodDeclaration(fn) || ts.isArrowFunction(fn) || ts.isFunctionExpression(fn))) {
        problems.push({ ...span, message: `backward '${site.objectName}.${name}' is not a function` });
        return undefined;
      }
      const flavour = functionFlavour(fn);
      if (flavour) problems.push({ ...span, message: `backward '${name}' is ${flavour}: it must return its result directly` });
      return { isMethod: true, span: { start: m.name.getStart(), end: m.name.getEnd() }, fn };
    }
  }
  if (site.kind === 'method' && site.classNode) {
    const m = findMethod(site.classNode, name, bindings);
    if (m.found) {
      const flavour = m.fn ? functionFlavour(m.fn) : undefined;
      if (flavour) problems.push({ ...span, message: `${role} '${name}' is ${flavour}: it must return its result directly` });
      return { isMethod: true, span: m.span, fn: m.fn };
    }
    unknownBase = m.unknownBase;
  }
  const b = bindings.topLevel.get(name);
  if (b) {
    const bad = bindingKindProblem(name, b, role);
    if (bad) problems.push({ ...span, message: bad });
    return { isMethod: false, span: b.span, fn: b.fn };
  }
  // The class extends one declared elsewhere: the backward may be inherited; the run will tell.
  if (unknownBase) return { isMethod: true };
  const where =
    site.kind === 'method' ? `a method of ${site.className || 'the class'}, a top-level function of this module or an import` : 'a top-level function of this module or an import';
  const candidates = [...bindings.topLevel.keys(), ...(site.classNode ? site.classNode.members.flatMap((m) => (m.name && ts.isIdentifier(m.name) ? [m.name.text] : [])) : [])];
  // Rename to the near name, or create the missing function (a stub with the checked signature).
  const near = suggestName(name, candidates);
  problems.push({ ...span, message: `${role} '${name}' not found: it must be ${where}${near.hint}`, fixes: [...near.fixes, { kind: 'create-function', name }] });
  return undefined;
}
