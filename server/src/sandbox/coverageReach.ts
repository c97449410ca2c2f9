// Says which sampled parameter would reach an unreached arm, when the arm's condition is a plain
// comparison of that parameter (or one of its elements) with a number: `x > 100`, `x[i] <= -2`,
// `this.w[j] >= 3`. Anything else (a computed value, a reassigned parameter, a helper's own
// parameter) gets no hint: the condition is read, never guessed.
import ts from 'typescript';
import type { OpDescriptor } from '../model/types';
import type { CodeBlock } from './coverageBlocks';
import { localNames } from './coverageFunctions';

type Comparison = '<' | '<=' | '>' | '>=';

const COMPARISONS = new Map<ts.SyntaxKind, Comparison>([
  [ts.SyntaxKind.LessThanToken, '<'],
  [ts.SyntaxKind.LessThanEqualsToken, '<='],
  [ts.SyntaxKind.GreaterThanToken, '>'],
  [ts.SyntaxKind.GreaterThanEqualsToken, '>='],
]);
const FLIPPED: Record<Comparison, Comparison> = { '<': '>', '<=': '>=', '>': '<', '>=': '<=' };
const NEGATED: Record<Comparison, Comparison> = { '<': '>=', '<=': '>', '>': '<=', '>=': '<' };

function unwrap(e: ts.Expression): ts.Expression {
  let x = e;
  while (ts.isParenthesizedExpression(x) || ts.isAsExpression(x) || ts.isNonNullExpression(x)) x = x.expression;
  return x;
}

/** A number literal, possibly negated, or a top-level `const NAME = <such a literal>` of the same file. */
function numberOf(e: ts.Expression, sf: ts.SourceFile, locals: Set<string>): number | undefined {
  const x = unwrap(e);
  if (ts.isNumericLiteral(x)) return Number(x.text);
  if (ts.isPrefixUnaryExpression(x) && x.operator === ts.SyntaxKind.MinusToken && ts.isNumericLiteral(x.operand)) return -Number(x.operand.text);
  if (ts.isIdentifier(x) && !locals.has(x.text)) {
    for (const st of sf.statements) {
      if (!ts.isVariableStatement(st) || !(st.declarationList.flags & ts.NodeFlags.Const)) continue;
      for (const d of st.declarationList.declarations) {
        if (ts.isIdentifier(d.name) && d.name.text === x.text && d.initializer) {
          const init = unwrap(d.initializer);
          return ts.isIdentifier(init) ? undefined : numberOf(init, sf, locals);
        }
      }
    }
  }
  return undefined;
}

/** `x`, `x[…]`, `this.f`, `this.f[…]` → the name as ops spell parameters (`x`, `this.f`) and whether an element is read. */
function parameterRef(e: ts.Expression): { name: string; element: boolean } | undefined {
  let x = unwrap(e);
  let element = false;
  if (ts.isElementAccessExpression(x)) {
    element = true;
    x = unwrap(x.expression);
  }
  if (ts.isIdentifier(x)) return { name: x.text, element };
  if (ts.isPropertyAccessExpression(x) && x.expression.kind === ts.SyntaxKind.ThisKeyword && ts.isIdentifier(x.name)) {
    return { name: `this.${x.name.text}`, element };
  }
  return undefined;
}

/**
 * Follows a local `const g = x[h]` (or `const g = x`) to the parameter it reads, when the
 * function declares that name exactly once; anything else is left as it is.
 */
function throughConstAlias(fn: ts.FunctionLikeDeclaration, ref: { name: string; element: boolean }): { name: string; element: boolean } {
  if (ref.name.startsWith('this.') || fn.parameters.some((p) => ts.isIdentifier(p.name) && p.name.text === ref.name)) return ref;
  const found: ts.VariableDeclaration[] = [];
  let other = false;
  const visit = (n: ts.Node): void => {
    if (ts.isVariableDeclaration(n) && ts.isIdentifier(n.name) && n.name.text === ref.name) {
      if (n.parent.flags & ts.NodeFlags.Const) found.push(n);
      else other = true;
    } else if ((ts.isParameter(n) || ts.isFunctionDeclaration(n)) && n.name && ts.isIdentifier(n.name) && n.name.text === ref.name) {
      other = true;
    }
    ts.forEachChild(n, visit);
  };
  if (fn.body) visit(fn.body);
  const decl = found[0];
  if (other || found.length !== 1 || !decl?.initializer) return ref;
  const inner = parameterRef(decl.initializer);
  if (!inner || inner.name === ref.name) return ref;
  return { name: inner.name, element: inner.element || ref.element };
}

/** True when the function writes to the name or its elements anywhere (then its sampled values are not what the condition sees). */
function isWritten(fn: ts.FunctionLikeDeclaration, name: string): boolean {
  const rootName = (e: ts.Expression): string | undefined => {
    let x = unwrap(e);
    while (ts.isElementAccessExpression(x)) x = unwrap(x.expression);
    if (ts.isIdentifier(x)) return x.text;
    if (ts.isPropertyAccessExpression(x) && x.expression.kind === ts.SyntaxKind.ThisKeyword) return `this.${x.name.text}`;
    return undefined;
  };
  let written = false;
  const visit = (n: ts.Node): void => {
    if (written) return;
    if (ts.isBinaryExpression(n) && n.operatorToken.kind >= ts.SyntaxKind.FirstAssignment && n.operatorToken.kind <= ts.SyntaxKind.LastAssignment && rootName(n.left) === name)
      written = true;
    if (
      (ts.isPrefixUnaryExpression(n) || ts.isPostfixUnaryExpression(n)) &&
      (n.operator === ts.SyntaxKind.PlusPlusToken || n.operator === ts.SyntaxKind.MinusMinusToken) &&
      rootName(n.operand) === name
    )
      written = true;
    ts.forEachChild(n, visit);
  };
  if (fn.body) visit(fn.body);
  return written;
}

/** The op's parameter name a function parameter or `this.f` stands for, or undefined. */
function opParamName(block: CodeBlock, op: OpDescriptor, name: string): string | undefined {
  if (name.startsWith('this.')) return op.params.some((p) => p.name === name) ? name : undefined;
  const fn = block.fn;
  const index = fn.node.parameters.findIndex((p) => ts.isIdentifier(p.name) && p.name.text === name);
  if (index < 0) return undefined;
  if (fn.role === 'forward') {
    const own = op.params.filter((p) => !p.isField)[index];
    return own?.name;
  }
  if (fn.role === 'backward') {
    const arg = op.backwardArgs[index];
    return arg?.kind === 'param' ? arg.name : undefined;
  }
  return undefined;
}

function formatNumber(n: number): string {
  return String(n);
}

/** The hint for an unreached arm, or undefined when its condition does not say it plainly. */
export function reachHint(block: CodeBlock, op: OpDescriptor): string | undefined {
  const guard = block.guard;
  if (!guard || (block.fn.role !== 'forward' && block.fn.role !== 'backward')) return undefined;
  const cond = unwrap(guard.condition);
  if (!ts.isBinaryExpression(cond)) return undefined;
  let op0 = COMPARISONS.get(cond.operatorToken.kind);
  if (!op0) return undefined;
  let ref = parameterRef(cond.left);
  const sf = block.fn.sf;
  const locals = localNames(block.fn.node);
  let bound = numberOf(cond.right, sf, locals);
  if (!ref || bound === undefined) {
    ref = parameterRef(cond.right);
    bound = numberOf(cond.left, sf, locals);
    op0 = FLIPPED[op0];
  }
  if (!ref || bound === undefined || !Number.isFinite(bound)) return undefined;
  ref = throughConstAlias(block.fn.node, ref);
  const paramName = opParamName(block, op, ref.name);
  if (!paramName || isWritten(block.fn.node, ref.name)) return undefined;
  const param = op.params.find((p) => p.name === paramName);
  const sample = param?.sample;
  if (!sample || sample.kind !== 'random') return undefined;
  // An element read needs an array parameter, a plain read a scalar one.
  if (ref.element !== sample.shape.length > 0) return undefined;
  const need = guard.negated ? NEGATED[op0] : op0;
  const [lo, hi] = sample.range;
  const reachable = need === '>' ? hi > bound : need === '>=' ? hi >= bound : need === '<' ? lo < bound : lo <= bound;
  const what = `${ref.element ? `an element of ${paramName}` : paramName} ${need} ${formatNumber(bound)}`;
  const range = `[${formatNumber(lo)}, ${formatNumber(hi)}]`;
  return reachable
    ? `runs when ${what}; @sample ${paramName} ${range} allows it, but no value drawn in this check did`
    : `runs only when ${what}, outside @sample ${paramName} ${range}: a range reaching ${formatNumber(bound)} would run it`;
}
