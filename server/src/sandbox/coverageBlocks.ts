// The code a coverage report speaks about, as blocks: straight runs of statements, both arms of
// every condition, loop bodies, case clauses, callbacks, and the code after a statement that can
// jump — of the functions coverageFunctions.ts finds (the op's forward, backward and helpers).
import ts from 'typescript';

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

/** Longest condition text quoted in a label. */
const MAX_CONDITION_CHARS = 40;
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
  ts.SyntaxKind.AmpersandAmpersandToken,
  ts.SyntaxKind.BarBarToken,
  ts.SyntaxKind.QuestionQuestionToken,
  ts.SyntaxKind.AmpersandAmpersandEqualsToken,
  ts.SyntaxKind.BarBarEqualsToken,
  ts.SyntaxKind.QuestionQuestionEqualsToken,
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
    const functionBody = (f: ts.FunctionLikeDeclaration, parent: CodeBlock | undefined, what: string): void => {
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
