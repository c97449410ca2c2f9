// Finds the declarations whose JSDoc may mark an op: top-level functions, consts bound to a
// function, methods of top-level classes; and, so a misplaced tag is not silently ignored,
// annotated declarations anywhere else (reported as not reachable).
import ts from 'typescript';
import { unwrapExpression } from './moduleBindings';
import type { Span } from './positions';
import { customGradFunction, tensorLibraryImports, type TensorLibraryImports } from './tensorLibrary';

export interface ForwardSite {
  kind: 'function' | 'method';
  /** Binding or method name; '' when the declaration has none. */
  name: string;
  /** Where the op is shown: the name, or the declaration's first keyword when unnamed. */
  nameSpan: Span;
  className?: string;
  classNode?: ts.ClassLikeDeclaration;
  /** The node whose JSDoc holds the tags. */
  docHost: ts.Node;
  /** The function itself (absent when the annotated thing is not a function). */
  fn?: ts.SignatureDeclaration;
  /** Why the checker cannot run this declaration as it stands; becomes a problem on the op. */
  unsupported?: string;
  /** The tags cannot belong here at all: report `unsupported` alone, without reading them further. */
  onlyProblem?: boolean;
  /** The module's anonymous default export (reached as DEFAULT_EXPORT_BINDING). */
  isDefaultExport?: boolean;
  /** For a function held by a top-level object literal (`export const ops = { f(x) {} }`): the const's name. */
  objectName?: string;
  objectNode?: ts.ObjectLiteralExpression;
  /**
   * A const bound to `tf.customGrad(fn)`: `fn` is the function above (its inputs are tensors,
   * and its last parameter may be the save function); the engine calls the const itself.
   */
  customGrad?: boolean;
}

const NOT_TOP_LEVEL = 'is not at the top level of the module: only top-level functions, consts bound to a function and methods of top-level classes can be checked';

function spanOf(node: ts.Node): Span {
  return { start: node.getStart(), end: node.getEnd() };
}

function isFunctionLike(e: ts.Expression): e is ts.ArrowFunction | ts.FunctionExpression {
  return ts.isArrowFunction(e) || ts.isFunctionExpression(e);
}

function hasModifier(node: ts.Node, flag: ts.ModifierFlags): boolean {
  return (ts.getCombinedModifierFlags(node as ts.Declaration) & flag) !== 0;
}

/** The name of a declaration as text, if it is a plain identifier. */
function plainName(name: ts.Node | undefined): string | undefined {
  return name && ts.isIdentifier(name) ? name.text : undefined;
}

/** Sites of one top-level statement. */
function statementSites(st: ts.Statement, lib: TensorLibraryImports): ForwardSite[] {
  if (ts.isFunctionDeclaration(st)) {
    const site: ForwardSite = {
      kind: 'function',
      name: st.name?.text ?? '',
      nameSpan: spanOf(st.name ?? st),
      docHost: st,
      fn: st,
    };
    const isDefault = hasModifier(st, ts.ModifierFlags.Default);
    if (!st.name && isDefault) {
      // `export default function (x) {}`: reached through the module's default export.
      site.name = 'default';
      site.isDefaultExport = true;
      const keyword = st.modifiers?.find((m) => m.kind === ts.SyntaxKind.DefaultKeyword);
      if (keyword) site.nameSpan = spanOf(keyword);
    } else if (!st.name) site.unsupported = 'this function has no name: give it one so the checker can reach it';
    else if (!st.body) site.unsupported = `'${st.name.text}' has no body here (an overload signature or a declaration): put the tags on the implementation`;
    if (!st.name && !isDefault) site.nameSpan = { start: st.getStart(), end: st.getStart() + (st.getText().startsWith('export') ? 'export'.length : 'function'.length) };
    return [site];
  }
  if (ts.isVariableStatement(st)) {
    return st.declarationList.declarations.flatMap((d): ForwardSite[] => {
      if (!ts.isIdentifier(d.name)) return [];
      const init = d.initializer && unwrapExpression(d.initializer);
      const site: ForwardSite = { kind: 'function', name: d.name.text, nameSpan: spanOf(d.name), docHost: d };
      const customFn = init && customGradFunction(init, lib);
      if (init && isFunctionLike(init)) site.fn = init;
      else if (customFn) {
        site.fn = customFn;
        site.customGrad = true;
      } else if (init && ts.isObjectLiteralExpression(init)) {
        // An object of functions: its members are ops; tags on the const itself are misplaced.
        const members = objectMemberSites(d.name.text, init);
        return ts.getJSDocTags(d).length > 0
          ? [{ ...site, unsupported: `'${d.name.text}' is an object: put @backward on the function inside it that is the forward` }, ...members]
          : members;
      } else
        site.unsupported = `'${d.name.text}' is not bound to a function: @backward goes on a function, a const bound to an arrow function, a function expression or a \`tf.customGrad(...)\` call, or a class method`;
      return [site];
    });
  }
  if (ts.isClassDeclaration(st)) {
    const className = st.name?.text ?? '';
    // Tags on the class itself (not on a method) were meant for one of its methods: say so.
    const onClass: ForwardSite = {
      kind: 'function',
      name: className,
      nameSpan: spanOf(st.name ?? st),
      docHost: st,
      unsupported: `the tags are on the class${className ? ` '${className}'` : ''}, not on a method: move the JSDoc block with @backward and @sample to the forward method the check should call`,
      onlyProblem: true,
    };
    return [onClass, ...st.members.flatMap((m) => memberSite(m, className, st, st.name ? undefined : 'this class has no name: give it one so the checker can reach it'))];
  }
  if (ts.isExportAssignment(st)) {
    const init = unwrapExpression(st.expression);
    // `export default (x) => ...` / `export default function (x) {...}` as an expression.
    const defaultKeyword = st.getChildren().find((c) => c.kind === ts.SyntaxKind.DefaultKeyword);
    const nameSpan = defaultKeyword ? spanOf(defaultKeyword) : spanOf(st);
    if (!st.isExportEquals && isFunctionLike(init)) return [{ kind: 'function', name: 'default', nameSpan, docHost: st, fn: init, isDefaultExport: true }];
    return [{ kind: 'function', name: '', nameSpan: spanOf(st), docHost: st, unsupported: 'this default export is not a function: @backward goes on a function' }];
  }
  return [];
}

/** Functions of a top-level object literal: `{ f(x) {}, g: (x) => x }`. */
function objectMemberSites(objectName: string, obj: ts.ObjectLiteralExpression): ForwardSite[] {
  const out: ForwardSite[] = [];
  for (const m of obj.properties) {
    if (!(ts.isMethodDeclaration(m) || ts.isPropertyAssignment(m))) continue;
    const name = plainName(m.name) ?? m.name.getText();
    const site: ForwardSite = { kind: 'function', name, nameSpan: spanOf(m.name), docHost: m, objectName, objectNode: obj };
    if (ts.isMethodDeclaration(m)) site.fn = m;
    else {
      const init = unwrapExpression(m.initializer);
      if (isFunctionLike(init)) site.fn = init;
      else site.unsupported = `'${objectName}.${name}' is not a function: @backward goes on a function`;
    }
    if (!site.unsupported && !ts.isIdentifier(m.name)) site.unsupported = `'${name}' needs a plain name (not computed or quoted) so the checker can call it`;
    out.push(site);
  }
  return out;
}

function memberSite(m: ts.ClassElement, className: string, cls: ts.ClassLikeDeclaration, classProblem?: string): ForwardSite[] {
  if (!(ts.isMethodDeclaration(m) || ts.isPropertyDeclaration(m) || ts.isGetAccessor(m) || ts.isSetAccessor(m) || ts.isConstructorDeclaration(m))) return [];
  // Unreachable members still get a readable name for the report: `constructor`, `#hidden`.
  const name = ts.isConstructorDeclaration(m) ? 'constructor' : (plainName(m.name) ?? m.name?.getText() ?? '');
  const site: ForwardSite = {
    kind: 'method',
    name,
    nameSpan: spanOf(m.name ?? m.getFirstToken() ?? m),
    className,
    classNode: cls,
    docHost: m,
  };
  const boundField = ts.isPropertyDeclaration(m) && m.initializer && isFunctionLike(unwrapExpression(m.initializer));
  if (ts.isMethodDeclaration(m)) site.fn = m;
  else if (boundField) site.fn = unwrapExpression(m.initializer!) as ts.SignatureDeclaration;
  if (classProblem) site.unsupported = classProblem;
  // The engine takes methods from the class prototype; a field only exists on instances.
  else if (boundField) site.unsupported = `'${name}' is a field holding a function, not a method: checks call methods from the class, so write \`${name}(...) { ... }\``;
  else if (ts.isConstructorDeclaration(m)) site.unsupported = 'a constructor cannot be an op: annotate a method (use @construct to build the instance)';
  else if (ts.isGetAccessor(m) || ts.isSetAccessor(m)) site.unsupported = 'an accessor cannot be an op: annotate a method';
  else if (!site.fn) site.unsupported = `'${name}' is not a method: @backward goes on a method or a field bound to a function`;
  else if (!m.name || !ts.isIdentifier(m.name)) site.unsupported = 'the method needs a plain name (not private #, computed or quoted) so the checker can call it';
  else if (hasModifier(m, ts.ModifierFlags.Static)) site.unsupported = `'${name}' is static: checks call methods on an instance; make it a top-level function instead`;
  else if (ts.isMethodDeclaration(m) && !m.body) site.unsupported = `'${name}' has no body here (an overload signature or an abstract method): put the tags on the implementation`;
  return [site];
}

/**
 * Annotatable declarations below the top level (inside functions, namespaces, blocks, object
 * literals, class expressions). Only subtrees whose text holds an `@` can hold a tag, so the
 * walk skips the rest (`atOffsets`: sorted offsets of every `@` in the file).
 */
function nestedSites(root: ts.Node, out: ForwardSite[], atOffsets: readonly number[], childrenOnly = false): void {
  const visit = (node: ts.Node): void => {
    if (!containsOffset(atOffsets, node.pos, node.end)) return;
    let name: string | undefined;
    let host: ts.Node | undefined;
    if (ts.isFunctionDeclaration(node) || ts.isMethodDeclaration(node) || ts.isPropertyDeclaration(node) || ts.isPropertyAssignment(node)) {
      name = plainName(node.name) ?? '';
      host = node;
    } else if (ts.isVariableDeclaration(node)) {
      name = plainName(node.name) ?? '';
      host = node;
    }
    if (host) {
      const at = (host as ts.NamedDeclaration).name ?? host;
      out.push({ kind: 'function', name: name ?? '', nameSpan: spanOf(at), docHost: host, unsupported: `'${name || 'this declaration'}' ${NOT_TOP_LEVEL}` });
    }
    ts.forEachChild(node, visit);
  };
  // `childrenOnly`: the root is a site already; only what is below it is nested.
  if (childrenOnly && root) ts.forEachChild(root, (child) => (ts.isBlock(child) ? ts.forEachChild(child, visit) : undefined));
  else ts.forEachChild(root, visit);
}

/** Whether some offset in the sorted list lies in [start, end). */
function containsOffset(sorted: readonly number[], start: number, end: number): boolean {
  let lo = 0;
  let hi = sorted.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (sorted[mid]! < start) lo = mid + 1;
    else hi = mid;
  }
  return lo < sorted.length && sorted[lo]! < end;
}

/**
 * Every place an op could be declared, in source order. Top-level sites are candidates; nested
 * ones always carry `unsupported` (they matter only when they have our tags).
 */
export function findForwardSites(sf: ts.SourceFile): ForwardSite[] {
  const sites: ForwardSite[] = [];
  const lib = tensorLibraryImports(sf);
  const atOffsets: number[] = [];
  for (let i = sf.text.indexOf('@'); i !== -1; i = sf.text.indexOf('@', i + 1)) atOffsets.push(i);
  for (const st of sf.statements) {
    sites.push(...statementSites(st, lib));
    // Look inside for annotated declarations the checker cannot reach.
    if (ts.isClassDeclaration(st)) {
      for (const m of st.members) nestedSites(m, sites, atOffsets);
    } else if (ts.isVariableStatement(st)) {
      for (const d of st.declarationList.declarations) {
        if (!d.initializer) continue;
        const init = unwrapExpression(d.initializer);
        // The direct members of a top-level object literal are sites; look inside their bodies.
        if (ts.isIdentifier(d.name) && ts.isObjectLiteralExpression(init)) {
          for (const m of init.properties) {
            if (ts.isMethodDeclaration(m)) nestedSites(m, sites, atOffsets, true);
            else if (ts.isPropertyAssignment(m)) nestedSites(m.initializer, sites, atOffsets);
            else nestedSites(m, sites, atOffsets);
          }
        } else nestedSites(d.initializer, sites, atOffsets);
      }
    } else nestedSites(st, sites, atOffsets);
  }
  return sites;
}
