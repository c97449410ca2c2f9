// Parses the body of a `@sample PARAM SPEC` tag (docs/annotations.md, "@sample PARAM SPEC") into the
// parameter it draws and a SampleSpec, or problems pointing inside the tag.
import type { SampleDtype, SampleSpec } from '../model/types';
import { TagCursor, type Token } from './lexer';
import type { Span, SpanProblem } from './positions';
import type { RawTag } from './tagText';
import { fixesField, suggestName } from './suggestion';
import { findJsonSyntaxError } from './jsonError';

const DTYPES: readonly SampleDtype[] = ['f64', 'f32', 'num', 'i32', 'int'];
/** Element types that are single numbers when written without dimensions. */
const SCALAR_DTYPES: readonly SampleDtype[] = ['num', 'int'];
const INTEGER_DTYPES: readonly SampleDtype[] = ['i32', 'int'];
/** Range used when a spec has no `in [lo, hi]` (docs/annotations.md). */
export const DEFAULT_SAMPLE_RANGE: readonly [number, number] = [-1, 1];

/** The parameter named by a `@sample` tag. */
export interface SampleTarget {
  /** `x`, or `this.weight` for a field. */
  name: string;
  isField: boolean;
  span: Span;
}

export interface ParsedSample {
  target?: SampleTarget;
  spec?: SampleSpec;
  problems: SpanProblem[];
}

export function parseSampleTag(tag: RawTag): ParsedSample {
  const c = new TagCursor(tag);
  const problems: SpanProblem[] = [];
  const target = parseSampleTarget(c, problems);
  if (!target) return { problems };
  const spec = parseSpec(c, target.name, problems);
  return { target, spec: problems.length ? undefined : spec, problems };
}

/** Why `this.#name` cannot be sampled, and what to write instead. */
export function privateFieldMessage(name: string): string {
  return `'this.#${name}' is a private (#) field: the checker cannot set or read it from outside the class; declare it \`private ${name}\` (TypeScript's private, a normal property at run time) to sample it, or build the instance with @construct and sample only the parameters`;
}

/** `x` or `this.FIELD`. */
function parseSampleTarget(c: TagCursor, problems: SpanProblem[]): SampleTarget | undefined {
  const first = c.next();
  if (!first) {
    problems.push(c.problemAt(undefined, '@sample needs a parameter name and a spec, e.g. `@sample x f64[8]`'));
    return undefined;
  }
  if (first.kind !== 'word') {
    problems.push(c.problemAt(first, `@sample: expected a parameter name, found '${first.text}'`));
    return undefined;
  }
  if (first.text === 'this') {
    const dot = c.eat('.');
    const field = c.peek();
    if (dot && field && field.text === '#') {
      problems.push(c.problemAt(field, privateFieldMessage(c.peek(1)?.kind === 'word' ? c.peek(1)!.text : 'FIELD')));
      return undefined;
    }
    if (!dot || !field || field.kind !== 'word') {
      problems.push(c.problemAt(field ?? first, '@sample: expected `this.FIELD`'));
      return undefined;
    }
    c.next();
    const span = { start: c.spanOf(first).start, end: c.spanOf(field).end };
    return { name: `this.${field.text}`, isField: true, span };
  }
  return { name: first.text, isField: false, span: c.spanOf(first) };
}

function parseSpec(c: TagCursor, param: string, problems: SpanProblem[]): SampleSpec | undefined {
  const head = c.next();
  if (!head) {
    problems.push(c.problemAt(undefined, `@sample ${param}: missing spec (e.g. \`f64[8]\`, \`num\`, \`= 1\`)`));
    return undefined;
  }
  if (head.kind === 'punct' && head.text === '=') return parseLiteral(c, head, param, problems);
  if (head.kind !== 'word' || !DTYPES.includes(head.text as SampleDtype)) {
    const near = head.kind === 'word' ? suggestName(head.text, DTYPES) : undefined;
    const hint = near?.hint || ' (f64, f32, num, i32 or int), or `= JSON`';
    problems.push({ ...c.problemAt(head, `@sample ${param}: unknown element type '${head.text}'${hint}`), ...fixesField(near?.fixes ?? []) });
    return undefined;
  }
  const dtype = head.text as SampleDtype;
  const shape = parseShape(c, head, dtype, param, problems);
  if (!shape) return undefined;
  const isInt = INTEGER_DTYPES.includes(dtype);
  let range: [number, number] = [DEFAULT_SAMPLE_RANGE[0], DEFAULT_SAMPLE_RANGE[1]];
  const avoid: number[] = [];
  let fixed = false;
  const seen = new Set<string>();
  while (!c.atEnd()) {
    const word = c.next()!;
    if (word.kind === 'word' && (word.text === 'in' || word.text === 'avoid' || word.text === 'fixed')) {
      if (seen.has(word.text)) {
        problems.push(c.problemAt(word, `@sample ${param}: '${word.text}' given twice`));
        return undefined;
      }
      seen.add(word.text);
      if (word.text === 'fixed') fixed = true;
      else if (word.text === 'in') {
        const r = parseRange(c, word, isInt, param, problems);
        if (!r) return undefined;
        range = r;
      } else {
        const list = parseNumberList(c, word, param, problems);
        if (!list) return undefined;
        avoid.push(...list);
      }
      continue;
    }
    const near = word.kind === 'word' ? suggestName(word.text, ['in', 'avoid', 'fixed']) : undefined;
    const useful = near !== undefined && near.hint !== '' && near.fixes[0]?.kind === 'replace' && near.fixes[0].text !== word.text ? near : undefined;
    const hint = useful?.hint ?? ' (expected `in [lo, hi]`, `avoid v, ...` or `fixed`)';
    problems.push({ ...c.problemAt(word, `@sample ${param}: unexpected '${word.text}'${hint}`), ...fixesField(useful?.fixes ?? []) });
    return undefined;
  }
  return { kind: 'random', dtype, shape, range, avoid, fixed };
}

/** `[d1, d2, ...]` after the element type, or nothing for the scalar types. */
function parseShape(c: TagCursor, head: Token, dtype: SampleDtype, param: string, problems: SpanProblem[]): number[] | undefined {
  const open = c.eat('[');
  if (!open) {
    if (SCALAR_DTYPES.includes(dtype)) return [];
    problems.push(c.problemAt(head, `@sample ${param}: missing dimensions: write ${dtype}[n] or ${dtype}[rows, cols]`));
    return undefined;
  }
  if (dtype === 'int') {
    problems.push(c.problemAt(head, `@sample ${param}: 'int' is one integer; use i32[...] for an array of integers`));
    return undefined;
  }
  const shape: number[] = [];
  for (;;) {
    const t = c.next();
    if (!t || (t.kind === 'punct' && (t.text === ']' || t.text === ','))) {
      problems.push(c.problemAt(t ?? open, `@sample ${param}: missing dimension`));
      return undefined;
    }
    const n = Number(t.text);
    if (t.kind !== 'number' || !Number.isSafeInteger(n) || n < 1 || /[.eE]/.test(t.text)) {
      problems.push(c.problemAt(t, `@sample ${param}: dimension '${t.text}' must be a positive integer`));
      return undefined;
    }
    shape.push(n);
    const sep = c.next();
    if (sep && sep.kind === 'punct' && sep.text === ']') return shape;
    if (!sep || sep.kind !== 'punct' || sep.text !== ',') {
      problems.push(c.problemAt(sep ?? t, `@sample ${param}: expected ',' or ']' in the dimensions`));
      return undefined;
    }
  }
}

/** `[lo, hi]` after `in`. */
function parseRange(c: TagCursor, keyword: Token, isInt: boolean, param: string, problems: SpanProblem[]): [number, number] | undefined {
  const open = c.eat('[');
  if (!open) {
    problems.push(c.problemAt(c.peek() ?? keyword, `@sample ${param}: expected '[lo, hi]' after 'in'`));
    return undefined;
  }
  const lo = parseNumber(c, open, param, problems);
  if (lo === undefined) return undefined;
  if (!c.eat(',')) {
    problems.push(c.problemAt(c.peek() ?? lo.token, `@sample ${param}: expected ',' between lo and hi`));
    return undefined;
  }
  const hi = parseNumber(c, lo.token, param, problems);
  if (hi === undefined) return undefined;
  const close = c.eat(']');
  if (!close) {
    problems.push(c.problemAt(c.peek() ?? hi.token, `@sample ${param}: expected ']' after the range`));
    return undefined;
  }
  const whole = { start: open.start, end: close.end };
  if (isInt && (!Number.isInteger(lo.value) || !Number.isInteger(hi.value))) {
    problems.push(c.problemAt({ ...whole, kind: 'other', text: '' }, `@sample ${param}: an integer range needs integer bounds`));
    return undefined;
  }
  if (!(lo.value < hi.value)) {
    problems.push(c.problemAt({ ...whole, kind: 'other', text: '' }, `@sample ${param}: range [${lo.token.text}, ${hi.token.text}] is empty: lo must be below hi`));
    return undefined;
  }
  return [lo.value, hi.value];
}

/** `v1, v2, ...` after `avoid`. */
function parseNumberList(c: TagCursor, keyword: Token, param: string, problems: SpanProblem[]): number[] | undefined {
  const values: number[] = [];
  let prev = keyword;
  do {
    const n = parseNumber(c, prev, param, problems);
    if (n === undefined) return undefined;
    values.push(n.value);
    prev = n.token;
  } while (c.eat(','));
  return values;
}

function parseNumber(c: TagCursor, prev: Token, param: string, problems: SpanProblem[]): { value: number; token: Token } | undefined {
  const t = c.next();
  const value = t && t.kind === 'number' ? Number(t.text) : NaN;
  if (!t || !Number.isFinite(value)) {
    problems.push(c.problemAt(t ?? prev, `@sample ${param}: expected a number${t ? `, found '${t.text}'` : ''}`));
    return undefined;
  }
  return { value, token: t };
}

/** `= JSON`: the rest of the tag, possibly over several lines. */
function parseLiteral(c: TagCursor, eq: Token, param: string, problems: SpanProblem[]): SampleSpec | undefined {
  const json = c.restFrom(eq.end);
  const lead = json.length - json.trimStart().length;
  if (json.trim() === '') {
    problems.push(c.problemAt(eq, `@sample ${param}: missing JSON value after '='`));
    return undefined;
  }
  // Our own grammar check first: it gives the failing character on every runtime.
  const syntax = findJsonSyntaxError(json);
  if (syntax) {
    const at = eq.end + syntax.offset;
    problems.push(c.problemAt({ kind: 'other', text: '', start: at, end: at + 1 }, `@sample ${param}: invalid JSON value: ${syntax.message}`));
    return undefined;
  }
  try {
    return { kind: 'literal', value: JSON.parse(json) as unknown };
  } catch (err) {
    // Not expected after the grammar check; kept so a runtime difference cannot throw.
    const msg = err instanceof Error ? err.message : String(err);
    problems.push(c.problemAt({ kind: 'other', text: '', start: eq.end + lead, end: eq.end + lead + 1 }, `@sample ${param}: invalid JSON value (${msg})`));
    return undefined;
  }
}
