// Finds the code a coverage report speaks about: the op's forward and backward in the user's
// TypeScript, and the helpers they call in the user's own files (direct calls, followed through
// relative imports and re-exports). Their blocks are coverageBlocks.ts's job.
import { existsSync, readFileSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import ts from 'typescript';
import { parserSafeText } from '../discovery/index';
import type { OpDescriptor } from '../model/types';
import type { CodeFunction, Side } from './coverageBlocks';

/** How deep re-exports are followed to find an imported function. */
const MAX_REEXPORT_DEPTH = 4;

type FunctionNode = ts.FunctionLikeDeclaration;

/** Parsed files kept between ops: the ops of one file share their sources (file → text and tree). */
const PARSED_CACHE = new Map<string, { text: string; sf: ts.SourceFile }>();
/** Files kept parsed; a workspace check touches a few dozen. */
const MAX_PARSED = 64;

function parse(file: string, text: string): ts.SourceFile {
  const known = PARSED_CACHE.get(file);
  if (known && known.text === text) return known.sf;
  // JSDoc is not needed here, and TypeScript 6.0.3's JSDoc scanner can hang on some comments
  // (discovery/index.ts parserSafeText): parse none of it, and defuse the known trigger too.
  const options = { languageVersion: ts.ScriptTarget.Latest, jsDocParsingMode: ts.JSDocParsingMode.ParseNone };
  const sf = ts.createSourceFile(file, parserSafeText(text), options, true, file.endsWith('x') ? ts.ScriptKind.TSX : ts.ScriptKind.TS);
  PARSED_CACHE.delete(file);
  PARSED_CACHE.set(file, { text, sf });
  while (PARSED_CACHE.size > MAX_PARSED) {
    const oldest = PARSED_CACHE.keys().next().value;
    if (oldest === undefined) break;
    PARSED_CACHE.delete(oldest);
  }
  return sf;
}

/** Reads the user's sources (the checked file's text may be an unsaved buffer) and parses each once. */
class Sources {
  private readonly parsed = new Map<string, ts.SourceFile | undefined>();
  constructor(
    private readonly checkedFile: string,
    private readonly checkedText: string,
  ) {}

  get(file: string): ts.SourceFile | undefined {
    if (this.parsed.has(file)) return this.parsed.get(file);
    let text: string | undefined;
    if (file === this.checkedFile) text = this.checkedText;
    else {
      try {
        text = readFileSync(file, 'utf8');
      } catch {
        text = undefined;
      }
    }
    const sf = text === undefined ? undefined : parse(file, text);
    this.parsed.set(file, sf);
    return sf;
  }
}

function unwrap(e: ts.Expression | undefined): ts.Expression | undefined {
  let x = e;
  while (x && (ts.isParenthesizedExpression(x) || ts.isAsExpression(x) || ts.isSatisfiesExpression(x) || ts.isTypeAssertionExpression(x))) x = x.expression;
  return x;
}

function asFunction(e: ts.Node | undefined): FunctionNode | undefined {
  if (!e) return undefined;
  const x = ts.isExpression(e) ? unwrap(e) : e;
  return x && (ts.isArrowFunction(x) || ts.isFunctionExpression(x) || ts.isFunctionDeclaration(x) || ts.isMethodDeclaration(x)) ? x : undefined;
}

/**
 * The function a wrapper call is given, as in `const f = tf.customGrad((x, save) => …)`: the code
 * that runs when `f` is called (its gradient function inside it included).
 */
function wrappedFunction(e: ts.Expression | undefined): FunctionNode | undefined {
  const x = unwrap(e);
  if (!x || !ts.isCallExpression(x)) return undefined;
  for (const arg of x.arguments) {
    const fn = asFunction(arg);
    if (fn) return fn;
  }
  return undefined;
}

/** A top-level function (declaration or `const f = (…) => …`) or class of a file, by name. */
function topLevel(sf: ts.SourceFile, name: string): FunctionNode | ts.ClassDeclaration | undefined {
  for (const st of sf.statements) {
    if (ts.isFunctionDeclaration(st) && st.name?.text === name && st.body) return st;
    if (ts.isClassDeclaration(st) && st.name?.text === name) return st;
    if (ts.isVariableStatement(st)) {
      for (const d of st.declarationList.declarations) {
        if (ts.isIdentifier(d.name) && d.name.text === name) return asFunction(d.initializer) ?? wrappedFunction(d.initializer);
      }
    }
  }
  return undefined;
}

/** A method (or arrow-function property) of a class, by name. */
function memberOf(cls: ts.ClassLikeDeclaration, name: string): FunctionNode | undefined {
  for (const m of cls.members) {
    if (!m.name || !ts.isIdentifier(m.name) || m.name.text !== name) continue;
    if (ts.isMethodDeclaration(m) && m.body) return m;
    if (ts.isPropertyDeclaration(m)) return asFunction(m.initializer);
  }
  return undefined;
}

/** The file a relative module specifier names, as esbuild would find a TypeScript source. */
function resolveModule(from: string, spec: string): string | undefined {
  if (!spec.startsWith('.')) return undefined; // packages are not the user's code
  const base = resolve(dirname(from), spec);
  const stem = base.replace(/\.(c|m)?js$/, '');
  for (const candidate of [base, `${stem}.ts`, `${stem}.tsx`, `${stem}.mts`, `${stem}.cts`, `${base}/index.ts`, `${base}/index.tsx`]) {
    if (/[\\/]node_modules[\\/]/.test(candidate)) return undefined;
    if (/\.(c|m)?tsx?$/.test(candidate) && existsSync(candidate)) return candidate;
  }
  return undefined;
}

interface Found {
  file: string;
  sf: ts.SourceFile;
  node: FunctionNode | ts.ClassDeclaration;
}

/** Finds what `name` means at the top level of `file`: its own declaration or an import of the user's code. */
function resolveName(sources: Sources, file: string, name: string, depth = 0): Found | undefined {
  const sf = sources.get(file);
  if (!sf || depth > MAX_REEXPORT_DEPTH) return undefined;
  const own = topLevel(sf, name);
  if (own) return { file, sf, node: own };
  for (const st of sf.statements) {
    if (ts.isImportDeclaration(st) && ts.isStringLiteral(st.moduleSpecifier)) {
      const bindings = st.importClause?.namedBindings;
      if (!bindings || !ts.isNamedImports(bindings)) continue;
      for (const el of bindings.elements) {
        if (el.name.text !== name) continue;
        const target = resolveModule(file, st.moduleSpecifier.text);
        return target ? resolveName(sources, target, (el.propertyName ?? el.name).text, depth + 1) : undefined;
      }
    }
    if (ts.isExportDeclaration(st) && st.moduleSpecifier && ts.isStringLiteral(st.moduleSpecifier)) {
      const target = resolveModule(file, st.moduleSpecifier.text);
      if (!target) continue;
      if (!st.exportClause) {
        const found = resolveName(sources, target, name, depth + 1);
        if (found) return found;
      } else if (ts.isNamedExports(st.exportClause)) {
        for (const el of st.exportClause.elements) {
          if (el.name.text === name) return resolveName(sources, target, (el.propertyName ?? el.name).text, depth + 1);
        }
      }
    }
  }
  return undefined;
}

/** The file of `import * as ns from './x'`, for `ns.f()` calls. */
function namespaceImport(sf: ts.SourceFile, ns: string): string | undefined {
  for (const st of sf.statements) {
    if (!ts.isImportDeclaration(st) || !ts.isStringLiteral(st.moduleSpecifier)) continue;
    const b = st.importClause?.namedBindings;
    if (b && ts.isNamespaceImport(b) && b.name.text === ns) return resolveModule(sf.fileName, st.moduleSpecifier.text);
  }
  return undefined;
}

/** Names declared inside a function (parameters, locals): a call to one of them is not a top-level helper. */
export function localNames(fn: FunctionNode): Set<string> {
  const names = new Set<string>();
  const addBinding = (n: ts.BindingName): void => {
    if (ts.isIdentifier(n)) names.add(n.text);
    else for (const el of n.elements) if (!ts.isOmittedExpression(el)) addBinding(el.name);
  };
  const visit = (n: ts.Node): void => {
    if (ts.isParameter(n) || ts.isVariableDeclaration(n)) addBinding(n.name);
    if ((ts.isFunctionDeclaration(n) || ts.isClassDeclaration(n)) && n.name) names.add(n.name.text);
    ts.forEachChild(n, visit);
  };
  for (const p of fn.parameters) addBinding(p.name);
  if (fn.body) visit(fn.body);
  return names;
}

function enclosingClass(n: ts.Node): ts.ClassLikeDeclaration | undefined {
  for (let p: ts.Node | undefined = n.parent; p; p = p.parent) if (ts.isClassLike(p)) return p;
  return undefined;
}

function displayName(fn: FunctionNode, fallback: string): string {
  const cls = enclosingClass(fn);
  const own = fn.name && ts.isIdentifier(fn.name) ? fn.name.text : undefined;
  if (cls?.name && own) return `${cls.name.text}.${own}`;
  return own ?? fallback;
}

/** The op's forward and backward, and every helper they call directly in the user's files. */
export function findOpFunctions(op: OpDescriptor, checkedText: string): { functions: CodeFunction[]; sources: Sources } {
  const sources = new Sources(op.file, checkedText);
  const byNode = new Map<FunctionNode, CodeFunction>();
  const queue: CodeFunction[] = [];
  const add = (found: { file: string; sf: ts.SourceFile; node: FunctionNode }, role: CodeFunction['role'], side: Side, name: string): void => {
    const known = byNode.get(found.node);
    if (known) {
      if (!known.sides.has(side)) {
        known.sides.add(side);
        queue.push(known);
      }
      return;
    }
    const fn: CodeFunction = { ...found, name: displayName(found.node, name), role, sides: new Set([side]) };
    byNode.set(found.node, fn);
    queue.push(fn);
  };
  const t = op.target;
  const sf = sources.get(op.file);
  if (!sf) return { functions: [], sources };
  const cls = t.className ? resolveName(sources, op.file, t.className) : undefined;
  const classNode = cls && ts.isClassDeclaration(cls.node) ? cls : undefined;
  const fnOf = (name: string, isMethod: boolean): { file: string; sf: ts.SourceFile; node: FunctionNode } | undefined => {
    if (isMethod) {
      const m = classNode ? memberOf(classNode.node as ts.ClassDeclaration, name) : undefined;
      return m && classNode ? { file: classNode.file, sf: classNode.sf, node: m } : undefined;
    }
    const found = resolveName(sources, op.file, name);
    return found && !ts.isClassDeclaration(found.node) ? { file: found.file, sf: found.sf, node: found.node } : undefined;
  };
  const forward = fnOf(t.forwardName, t.kind === 'method');
  const backward = fnOf(t.backwardName, t.backwardIsMethod);
  if (forward) add(forward, 'forward', 'forward', op.forward);
  if (backward) add(backward, 'backward', 'backward', op.backward);
  // Follow calls breadth-first; a function reached again from the other side gains that side.
  while (queue.length > 0) {
    const fn = queue.shift()!;
    const locals = localNames(fn.node);
    const visit = (n: ts.Node): void => {
      if (ts.isCallExpression(n)) {
        const callee = unwrap(n.expression);
        let target: Found | undefined;
        if (callee && ts.isIdentifier(callee) && !locals.has(callee.text)) {
          target = resolveName(sources, fn.file, callee.text);
        } else if (callee && ts.isPropertyAccessExpression(callee) && ts.isIdentifier(callee.name)) {
          const owner = callee.expression;
          if (owner.kind === ts.SyntaxKind.ThisKeyword) {
            const c = enclosingClass(n);
            const m = c ? memberOf(c, callee.name.text) : undefined;
            if (m) target = { file: fn.file, sf: fn.sf, node: m };
          } else if (ts.isIdentifier(owner) && !locals.has(owner.text)) {
            const nsFile = namespaceImport(fn.sf, owner.text);
            if (nsFile) target = resolveName(sources, nsFile, callee.name.text);
          }
        }
        if (target && !ts.isClassDeclaration(target.node)) {
          for (const side of fn.sides) add({ file: target.file, sf: target.sf, node: target.node }, 'helper', side, callee?.getText(fn.sf) ?? 'helper');
        }
      }
      ts.forEachChild(n, visit);
    };
    if (fn.node.body) visit(fn.node.body);
  }
  return { functions: [...byNode.values()], sources };
}
