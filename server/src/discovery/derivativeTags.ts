// The derivative tags besides @backward — `@jacobian`, `@tangent`, `@hessian` — parsed into
// their function name and argument list (explicit, or the default of each kind), with every
// mistake placed inside the tag. buildOp turns each such tag into an op of its own.
import type { BackwardArg, OpKind, ParamDescriptor } from '../model/types';
import { TagCursor, type Token } from './lexer';
import type { Span, SpanProblem } from './positions';
import { fixesField, type Suggestion } from './suggestion';
import type { RawTag } from './tagText';

/** The kinds whose tag this module parses. */
export type DerivativeKind = Exclude<OpKind, 'backward'>;
export const DERIVATIVE_KINDS: readonly DerivativeKind[] = ['jacobian', 'tangent', 'hessian'];

/** What each kind's function returns, for the "needs a name" message. */
const EXAMPLES: Record<DerivativeKind, string> = {
  jacobian: '`@jacobian reachJacobian` (returns the Jacobian matrix)',
  tangent: '`@tangent reachTangent(q, $dq)` (returns J·t)',
  hessian: '`@hessian costHessian` (returns the Hessian matrix) or `@hessian costHvp(x, $v)`',
};

/** Placeholders of the argument lists. */
const OUTPUT_ARG = '$y';
const UPSTREAM_ARG = '$dy';
const VECTOR_ARG = '$v';
const TANGENT_PREFIX = '$d';

export interface WrittenDerivativeArg {
  arg: BackwardArg;
  /** `this.FIELD` written as a parameter or as a tangent's name. */
  isField: boolean;
  span: Span;
}

export interface ParsedDerivative {
  name?: string;
  nameSpan?: Span;
  args?: WrittenDerivativeArg[];
  listSpan?: Span;
  problems: SpanProblem[];
}

/** Parses `@KIND NAME` or `@KIND NAME(ARG, ...)`. */
export function parseDerivativeTag(tag: RawTag, kind: DerivativeKind): ParsedDerivative {
  const c = new TagCursor(tag);
  const problems: SpanProblem[] = [];
  const head = c.next();
  if (!head) return { problems: [{ ...tag.nameSpan, message: `@${kind} needs the name of a function, e.g. ${EXAMPLES[kind]}` }] };
  if (head.kind !== 'word' || head.text.startsWith('$')) return { problems: [c.problemAt(head, `@${kind}: expected a function's name, found '${head.text}'`)] };
  const nameSpan = c.spanOf(head);
  if (c.peek()?.text === '.') {
    let last: Token = head;
    while (c.peek()?.text === '.' && c.peek(1)?.kind === 'word') {
      c.next();
      last = c.next()!;
    }
    const dotted = tag.body.slice(head.start, last.end);
    problems.push({ start: nameSpan.start, end: c.spanOf(last).end, message: `@${kind}: '${dotted}' is not a plain name; import the function into this module and name it` });
    return { name: dotted, problems };
  }
  const open = c.eat('(');
  if (!open) {
    const extra = c.next();
    if (extra) problems.push(c.problemAt(extra, `@${kind}: unexpected '${extra.text}' after the name (an argument list is written NAME(a, b))`));
    return { name: head.text, nameSpan, problems };
  }
  const args: WrittenDerivativeArg[] = [];
  let close: Token | undefined = c.eat(')');
  while (!close) {
    const arg = parseArg(c, kind, problems);
    if (!arg) return { name: head.text, nameSpan, problems };
    args.push(arg);
    close = c.eat(')');
    if (close) break;
    if (!c.eat(',')) {
      problems.push(c.problemAt(c.peek(), `@${kind}: expected ',' or ')' in the argument list`));
      return { name: head.text, nameSpan, problems };
    }
  }
  const extra = c.next();
  if (extra) problems.push(c.problemAt(extra, `@${kind}: unexpected '${extra.text}' after the argument list`));
  return { name: head.text, nameSpan, args, listSpan: { start: c.spanOf(open).start, end: c.spanOf(close).end }, problems };
}

function placeholdersOf(kind: DerivativeKind): string {
  if (kind === 'tangent') return `${OUTPUT_ARG} or $dNAME (the tangent of parameter NAME)`;
  if (kind === 'hessian') return `${OUTPUT_ARG} or ${VECTOR_ARG} (the vector of a Hessian-vector product)`;
  return OUTPUT_ARG;
}

function parseArg(c: TagCursor, kind: DerivativeKind, problems: SpanProblem[]): WrittenDerivativeArg | undefined {
  const t = c.next();
  if (!t || t.kind !== 'word') {
    problems.push(c.problemAt(t, `@${kind}: expected an argument (a parameter name, this.FIELD or ${placeholdersOf(kind)})${t ? `, found '${t.text}'` : ''}`));
    return undefined;
  }
  const span = c.spanOf(t);
  if (t.text === OUTPUT_ARG) return { arg: { kind: 'output' }, isField: false, span };
  if (t.text === VECTOR_ARG && kind === 'hessian') return { arg: { kind: 'vector' }, isField: false, span };
  if (t.text === UPSTREAM_ARG) {
    problems.push(
      c.problemAt(
        t,
        `@${kind}: $dy (an upstream gradient) belongs to @backward; ${kind === 'jacobian' ? 'a Jacobian function returns the whole matrix' : kind === 'tangent' ? 'a tangent function takes the tangents $dNAME' : 'a Hessian function takes $v for a Hessian-vector product'}`,
      ),
    );
    return undefined;
  }
  if (kind === 'tangent' && t.text.startsWith(TANGENT_PREFIX) && t.text.length > TANGENT_PREFIX.length) {
    const base = t.text.slice(TANGENT_PREFIX.length);
    if (base === 'this' && c.peek()?.text === '.') {
      c.next();
      const field = c.next();
      if (!field || field.kind !== 'word') {
        problems.push(c.problemAt(field ?? t, `@${kind}: expected \`$dthis.FIELD\``));
        return undefined;
      }
      return { arg: { kind: 'tangent', name: `this.${field.text}` }, isField: true, span: { start: span.start, end: c.spanOf(field).end } };
    }
    return { arg: { kind: 'tangent', name: base }, isField: false, span };
  }
  if (t.text.startsWith('$')) {
    problems.push(c.problemAt(t, `@${kind}: unknown placeholder '${t.text}'; use ${placeholdersOf(kind)}`));
    return undefined;
  }
  if (t.text === 'this' && c.peek()?.text === '.') {
    c.next();
    const field = c.next();
    if (!field || field.kind !== 'word') {
      problems.push(c.problemAt(field ?? t, `@${kind}: expected \`this.FIELD\``));
      return undefined;
    }
    return { arg: { kind: 'param', name: `this.${field.text}` }, isField: true, span: { start: span.start, end: c.spanOf(field).end } };
  }
  return { arg: { kind: 'param', name: t.text }, isField: false, span };
}

/**
 * Whether discovery can tell a parameter is differentiated: a random float sample not marked
 * fixed, or (with @samples) a parameter not named by @fixed. The engine decides from the drawn
 * values in the end; this only shapes the default tangent list.
 */
function differentiated(p: ParamDescriptor, fixed: readonly string[], hasFactory: boolean): boolean {
  if (hasFactory) return !fixed.includes(p.name);
  const s = p.sample;
  if (!s || s.kind !== 'random') return false;
  return !s.fixed && s.dtype !== 'int' && s.dtype !== 'i32';
}

/**
 * The default argument list of a kind: every forward parameter in order, and for @tangent one
 * tangent per differentiated parameter (fields included) after them.
 */
export function defaultDerivativeArgs(
  kind: DerivativeKind,
  paramNames: readonly string[],
  params: readonly ParamDescriptor[],
  fixed: readonly string[],
  hasFactory: boolean,
): BackwardArg[] {
  const args: BackwardArg[] = paramNames.map((name) => ({ kind: 'param', name }));
  if (kind === 'tangent') {
    for (const p of params) if (differentiated(p, fixed, hasFactory)) args.push({ kind: 'tangent', name: p.name });
  }
  return args;
}

/** Checks an explicit list against the forward's parameters; returns the list. */
export function explicitDerivativeArgs(
  kind: DerivativeKind,
  parsed: ParsedDerivative,
  opts: { isMethod: boolean; forwardName: string; paramNames: readonly string[]; sampledFields: ReadonlySet<string>; suggest: (name: string) => Suggestion },
  problems: SpanProblem[],
): BackwardArg[] {
  const args: BackwardArg[] = [];
  const seen = new Set<string>();
  let tangents = 0;
  for (const w of parsed.args ?? []) {
    const a = w.arg;
    const key = a.kind === 'param' ? a.name : a.kind === 'tangent' ? `$d${a.name}` : a.kind === 'output' ? OUTPUT_ARG : VECTOR_ARG;
    if (seen.has(key)) problems.push({ ...w.span, message: `@${kind}: '${key}' is listed twice` });
    seen.add(key);
    args.push(a);
    if (a.kind !== 'param' && a.kind !== 'tangent') continue;
    if (a.kind === 'tangent') tangents++;
    const what = a.kind === 'tangent' ? `'${key}' is the tangent of '${a.name}', which` : `'${a.name}'`;
    if (w.isField) {
      if (!opts.isMethod) problems.push({ ...w.span, message: `@${kind}: ${what} names a field, but ${opts.forwardName} is not a method` });
      else if (!opts.sampledFields.has(a.name)) problems.push({ ...w.span, message: `@${kind}: '${a.name}' has no @sample; add \`@sample ${a.name} SPEC\`` });
    } else if (!opts.paramNames.includes(a.name)) {
      const near = opts.suggest(a.name);
      problems.push({ ...w.span, message: `@${kind}: ${what} is not a parameter of ${opts.forwardName}${near.hint}`, ...fixesField(near.fixes) });
    }
  }
  if (kind === 'tangent' && tangents === 0 && parsed.listSpan) {
    problems.push({ ...parsed.listSpan, message: `@tangent: the list names no tangent; write $d followed by a parameter's name (e.g. \`$d${opts.paramNames[0] ?? 'x'}\`)` });
  }
  return args;
}
