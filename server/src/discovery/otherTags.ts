// Parses the bodies of `@backward`, `@samples`, `@construct`, `@fixed`, `@tolerance` and
// `@seed` (docs/annotations.md) into values with spans, or problems pointing inside the tag.
import { TagCursor, type Token } from './lexer';
import { privateFieldMessage } from './sampleTag';
import type { Span, SpanProblem } from './positions';
import type { RawTag } from './tagText';

/** One written argument of `@backward NAME(...)`. */
export type WrittenBackwardArg = { kind: 'param'; name: string; isField: boolean; span: Span } | { kind: 'output'; span: Span } | { kind: 'upstream'; span: Span };

export interface ParsedBackward {
  name?: string;
  nameSpan?: Span;
  /** Absent when no list is written (the default list applies). */
  args?: WrittenBackwardArg[];
  /** From `(` to `)`, for problems about the list as a whole. */
  listSpan?: Span;
  problems: SpanProblem[];
}

/** Placeholders a backward list may name besides parameters. */
const OUTPUT_ARG = '$y';
const UPSTREAM_ARG = '$dy';

export function parseBackwardTag(tag: RawTag): ParsedBackward {
  const c = new TagCursor(tag);
  const problems: SpanProblem[] = [];
  const head = c.next();
  if (!head) {
    problems.push({ ...tag.nameSpan, message: '@backward needs the name of the backward function, e.g. `@backward softplusBackward`' });
    return { problems };
  }
  if (head.kind !== 'word' || head.text.startsWith('$')) {
    problems.push(c.problemAt(head, `@backward: expected the backward function's name, found '${head.text}'`));
    return { problems };
  }
  const nameSpan = c.spanOf(head);
  if (c.peek()?.text === '.') {
    // `lib.fn`: cover the whole dotted name; it is not resolved (the sandbox binds plain names).
    let last: Token = head;
    while (c.peek()?.text === '.' && c.peek(1)?.kind === 'word') {
      c.next();
      last = c.next()!;
    }
    const whole = { start: nameSpan.start, end: c.spanOf(last).end };
    const dotted = tag.body.slice(head.start, last.end);
    problems.push({ ...whole, message: `@backward: '${dotted}' is not a plain name; import the function into this module and name it` });
    return { name: dotted, problems };
  }
  const open = c.eat('(');
  if (!open) {
    const extra = c.next();
    if (extra) problems.push(c.problemAt(extra, `@backward: unexpected '${extra.text}' after the name (an argument list is written NAME(a, $dy))`));
    return { name: head.text, nameSpan, problems };
  }
  const args: WrittenBackwardArg[] = [];
  let close: Token | undefined = c.eat(')');
  while (!close) {
    const arg = parseBackwardArg(c, problems);
    if (!arg) return { name: head.text, nameSpan, problems };
    args.push(arg);
    close = c.eat(')');
    if (close) break;
    if (!c.eat(',')) {
      problems.push(c.problemAt(c.peek(), `@backward: expected ',' or ')' in the argument list`));
      return { name: head.text, nameSpan, problems };
    }
  }
  const extra = c.next();
  if (extra) problems.push(c.problemAt(extra, `@backward: unexpected '${extra.text}' after the argument list`));
  return { name: head.text, nameSpan, args, listSpan: { start: c.spanOf(open).start, end: c.spanOf(close).end }, problems };
}

function parseBackwardArg(c: TagCursor, problems: SpanProblem[]): WrittenBackwardArg | undefined {
  const t = c.next();
  if (!t || t.kind !== 'word') {
    problems.push(c.problemAt(t, `@backward: expected an argument (a parameter name, this.FIELD, $y or $dy)${t ? `, found '${t.text}'` : ''}`));
    return undefined;
  }
  if (t.text === OUTPUT_ARG) return { kind: 'output', span: c.spanOf(t) };
  if (t.text === UPSTREAM_ARG) return { kind: 'upstream', span: c.spanOf(t) };
  if (t.text.startsWith('$')) {
    problems.push(c.problemAt(t, `@backward: unknown placeholder '${t.text}'; use $y (forward output) or $dy (upstream gradient)`));
    return undefined;
  }
  if (t.text === 'this' && c.peek()?.text === '.') {
    c.next();
    const field = c.next();
    if (field && field.text === '#') {
      problems.push(c.problemAt(field, privateFieldMessage(c.peek()?.kind === 'word' ? c.peek()!.text : 'FIELD')));
      return undefined;
    }
    if (!field || field.kind !== 'word') {
      problems.push(c.problemAt(field ?? t, '@backward: expected `this.FIELD`'));
      return undefined;
    }
    return { kind: 'param', name: `this.${field.text}`, isField: true, span: { start: c.spanOf(t).start, end: c.spanOf(field).end } };
  }
  return { kind: 'param', name: t.text, isField: false, span: c.spanOf(t) };
}

/** A tag whose body is one name: `@samples FACTORY`, `@construct FACTORY`. */
export function parseNameTag(tag: RawTag, what: string): { name?: string; span?: Span; problems: SpanProblem[] } {
  const c = new TagCursor(tag);
  const t = c.next();
  if (!t) return { problems: [{ ...tag.nameSpan, message: `@${tag.name} needs the name of ${what}` }] };
  if (t.kind !== 'word' || t.text.startsWith('$')) return { problems: [c.problemAt(t, `@${tag.name}: expected the name of ${what}, found '${t.text}'`)] };
  const extra = c.next();
  const problems = extra ? [c.problemAt(extra, `@${tag.name}: unexpected '${extra.text}' after the name`)] : [];
  return { name: t.text, span: c.spanOf(t), problems };
}

/** `@fixed a, b, this.c`. */
export function parseNameListTag(tag: RawTag): { names: { name: string; span: Span }[]; problems: SpanProblem[] } {
  const c = new TagCursor(tag);
  const names: { name: string; span: Span }[] = [];
  if (c.atEnd()) return { names, problems: [{ ...tag.nameSpan, message: `@${tag.name} needs one or more parameter names, e.g. \`@fixed target, mask\`` }] };
  do {
    const t = c.next();
    if (!t || t.kind !== 'word') return { names, problems: [c.problemAt(t, `@${tag.name}: expected a parameter name${t ? `, found '${t.text}'` : ''}`)] };
    if (t.text === 'this' && c.peek()?.text === '.') {
      c.next();
      const f = c.next();
      if (!f || f.kind !== 'word') return { names, problems: [c.problemAt(f ?? t, `@${tag.name}: expected \`this.FIELD\``)] };
      names.push({ name: `this.${f.text}`, span: { start: c.spanOf(t).start, end: c.spanOf(f).end } });
    } else names.push({ name: t.text, span: c.spanOf(t) });
  } while (c.eat(','));
  const extra = c.next();
  return { names, problems: extra ? [c.problemAt(extra, `@${tag.name}: expected ',' between names, found '${extra.text}'`)] : [] };
}

/** `@tolerance REL`: a positive finite number. */
export function parseToleranceTag(tag: RawTag): { value?: number; problems: SpanProblem[] } {
  return parseOneNumber(tag, 'a positive relative tolerance, e.g. `@tolerance 1e-5`', (v) => v > 0 && Number.isFinite(v));
}

/**
 * Largest `@seed`: seeds are 32-bit unsigned integers, the state size of the engine's
 * generator (our choice; a larger value would be silently reduced).
 */
export const MAX_SEED = 0xffff_ffff;

/** `@seed N`: a non-negative integer up to MAX_SEED. */
export function parseSeedTag(tag: RawTag): { value?: number; problems: SpanProblem[] } {
  return parseOneNumber(tag, `an integer from 0 to ${MAX_SEED}, e.g. \`@seed 42\``, (v, text) => Number.isInteger(v) && v >= 0 && v <= MAX_SEED && !/[.eE]/.test(text));
}

function parseOneNumber(tag: RawTag, expected: string, ok: (v: number, text: string) => boolean): { value?: number; problems: SpanProblem[] } {
  const c = new TagCursor(tag);
  const t = c.next();
  if (!t) return { problems: [{ ...tag.nameSpan, message: `@${tag.name} needs ${expected}` }] };
  const value = t.kind === 'number' ? Number(t.text) : NaN;
  if (t.kind !== 'number' || !ok(value, t.text)) return { problems: [c.problemAt(t, `@${tag.name}: expected ${expected}, found '${t.text}'`)] };
  const extra = c.next();
  if (extra) return { problems: [c.problemAt(extra, `@${tag.name}: unexpected '${extra.text}' after the value`)] };
  return { value, problems: [] };
}
