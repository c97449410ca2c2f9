// The code a coverage report speaks about, read from the user's TypeScript: the op's forward and
// backward, the helpers they call in the user's own files (direct calls, followed through relative
// imports), and their blocks — straight runs of statements, both arms of every condition, loop
// bodies, case clauses, callbacks, and the code after a statement that can jump.
import { existsSync, readFileSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import ts from 'typescript';
import { parserSafeText } from '../discovery/index';
import type { OpDescriptor } from '../model/types';

export type Side = 'forward' | 'backward';

/** A function whose code the report covers. */
export interface CodeFunction {
  file: string;
  sf: ts.SourceFile;
  node: ts.FunctionLikeDeclaration;
  /** As shown to users: `name`, or `Class.method`. */
  name: string;
  role: 'forward' | 'backward' | 'helper';
  sides: Set<Side>;
}

/** One block: it runs as a whole or not at all (up to exceptions). */
export interface CodeBlock {
  fn: CodeFunction;
  /** Offsets in the file: where the block's first statement or expression starts, where it ends. */
  start: number;
  end: number;
  parent: CodeBlock | undefined;
  what: string;
  /** The comparison that guards an arm, and whether the arm runs when it is false. */
  guard?: { condition: ts.Expression; negated: boolean };
}

export interface OpCode {
  functions: CodeFunction[];
  blocks: CodeBlock[];
}

/** Longest condition text quoted in a label. */
const MAX_CONDITION_CHARS = 40;
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
  constructor(private readonly checkedFile: string, private readonly checkedText: string) {}

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

interface Found { file: string; sf: ts.SourceFile; node: FunctionNode | ts.ClassDeclaration }

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

/** Source text of a condition on one line, shortened. */
export function conditionText(e: ts.Expression, sf: ts.SourceFile): string {
  const text = e.getText(sf).replace(/\s+/g, ' ');
  return text.length > MAX_CONDITION_CHARS ? `${text.slice(0, MAX_CONDITION_CHARS - 1)}…` : text;
}

function lineOf(sf: ts.SourceFile, pos: number): number {
  return sf.getLineAndCharacterOfPosition(pos).line + 1;
}

/** True when a statement may end its statement list early (return, throw, break, continue), outside nested functions. */
function mayJump(st: ts.Node): boolean {
  if (ts.isReturnStatement(st) || ts.isThrowStatement(st) || ts.isBreakStatement(st) || ts.isContinueStatement(st)) return true;
  if (ts.isFunctionLike(st) || ts.isClassLike(st)) return false;
  return ts.forEachChild(st, (c) => (mayJump(c) ? true : undefined)) === true;
}

function jumpWord(st: ts.Statement): string {
  if (ts.isReturnStatement(st)) return 'return';
  if (ts.isThrowStatement(st)) return 'throw';
  if (ts.isBreakStatement(st)) return 'break';
  if (ts.isContinueStatement(st)) return 'continue';
  if (ts.isIfStatement(st)) return '`if`';
  if (ts.isSwitchStatement(st)) return '`switch`';
  if (ts.isTryStatement(st)) return '`try`';
  return 'statement';
}

const LOGICAL = new Set([
  ts.SyntaxKind.AmpersandAmpersandToken, ts.SyntaxKind.BarBarToken, ts.SyntaxKind.QuestionQuestionToken,
  ts.SyntaxKind.AmpersandAmpersandEqualsToken, ts.SyntaxKind.BarBarEqualsToken, ts.SyntaxKind.QuestionQuestionEqualsToken,
]);

/** Every block of the given functions; nested functions (callbacks) are blocks of their own. */
export function blocksOf(functions: CodeFunction[]): CodeBlock[] {
  const blocks: CodeBlock[] = [];
  for (const fn of functions) {
    const { sf } = fn;
    const newBlock = (start: number, end: number, parent: CodeBlock | undefined, what: string, guard?: CodeBlock['guard']): CodeBlock => {
      const b: CodeBlock = { fn, start, end, parent, what };
      if (guard) b.guard = guard;
      blocks.push(b);
      return b;
    };
    const list = (statements: readonly ts.Statement[], parent: CodeBlock | undefined, what: string, guard?: CodeBlock['guard']): void => {
      let current: CodeBlock | undefined;
      let previous: ts.Statement | undefined;
      for (const st of statements) {
        if (!current) {
          const label = previous ? `after the ${jumpWord(previous)} on line ${lineOf(sf, previous.getStart(sf))}` : what;
          current = newBlock(st.getStart(sf), st.end, parent, label, previous ? undefined : guard);
        }
        current.end = st.end;
        statement(st, current);
        previous = st;
        if (mayJump(st)) current = undefined;
      }
    };
    const arm = (st: ts.Statement, parent: CodeBlock, what: string, guard?: CodeBlock['guard']): void => {
      list(ts.isBlock(st) ? st.statements : [st], parent, what, guard);
    };
    const exprArm = (e: ts.Expression, parent: CodeBlock, what: string, guard?: CodeBlock['guard']): void => {
      expression(e, newBlock(e.getStart(sf), e.end, parent, what, guard));
    };
    const functionBody = (f: FunctionNode, parent: CodeBlock | undefined, what: string): void => {
      const body = f.body;
      if (!body) return;
      if (ts.isBlock(body)) list(body.statements, parent, what);
      else if (parent) exprArm(body, parent, what);
      else expression(body, newBlock(body.getStart(sf), body.end, undefined, what));
    };
    const statement = (st: ts.Statement, b: CodeBlock): void => {
      if (ts.isIfStatement(st)) {
        expression(st.expression, b);
        const c = conditionText(st.expression, sf);
        arm(st.thenStatement, b, `if \`${c}\``, { condition: st.expression, negated: false });
        if (st.elseStatement) arm(st.elseStatement, b, `else of \`${c}\``, { condition: st.expression, negated: true });
      } else if (ts.isIterationStatement(st, false)) {
        ts.forEachChild(st, (c) => {
          if (c !== st.statement) expression(c, b);
        });
        arm(st.statement, b, `body of the loop on line ${lineOf(sf, st.getStart(sf))}`);
      } else if (ts.isSwitchStatement(st)) {
        expression(st.expression, b);
        for (const clause of st.caseBlock.clauses) {
          const label = ts.isCaseClause(clause) ? `case \`${conditionText(clause.expression, sf)}\`` : `default of \`switch (${conditionText(st.expression, sf)})\``;
          list(clause.statements, b, label);
        }
      } else if (ts.isTryStatement(st)) {
        list(st.tryBlock.statements, b, b.what);
        if (st.catchClause) list(st.catchClause.block.statements, b, `catch on line ${lineOf(sf, st.catchClause.getStart(sf))}`);
        if (st.finallyBlock) list(st.finallyBlock.statements, b, b.what);
      } else if (ts.isBlock(st)) {
        list(st.statements, b, b.what);
      } else if (ts.isLabeledStatement(st)) {
        statement(st.statement, b);
      } else if (ts.isFunctionDeclaration(st)) {
        functionBody(st, b, `body of \`${st.name?.text ?? 'function'}\``);
      } else if (!ts.isClassDeclaration(st)) {
        ts.forEachChild(st, (c) => expression(c, b));
      }
    };
    const expression = (n: ts.Node, b: CodeBlock): void => {
      if (ts.isConditionalExpression(n)) {
        expression(n.condition, b);
        const c = conditionText(n.condition, sf);
        exprArm(n.whenTrue, b, `\`?\` arm of \`${c}\``, { condition: n.condition, negated: false });
        exprArm(n.whenFalse, b, `\`:\` arm of \`${c}\``, { condition: n.condition, negated: true });
      } else if (ts.isBinaryExpression(n) && LOGICAL.has(n.operatorToken.kind)) {
        expression(n.left, b);
        exprArm(n.right, b, `right side of \`${conditionText(n.left, sf)} ${n.operatorToken.getText(sf)}\``);
      } else if (ts.isArrowFunction(n) || ts.isFunctionExpression(n)) {
        functionBody(n, b, `callback on line ${lineOf(sf, n.getStart(sf))}`);
      } else if (ts.isClassLike(n)) {
        // A class expression's methods run only when called; not followed.
      } else {
        ts.forEachChild(n, (c) => expression(c, b));
      }
    };
    functionBody(fn.node, undefined, fn.role === 'helper' ? `\`${fn.name}\`` : 'body');
  }
  return blocks;
}
