// A small tokenizer for tag bodies (`f64[3, 4] in [-1, 1]`, `name(a, $dy)`), and a cursor the
// tag parsers walk with. It never fails: anything it does not know becomes an `other` token,
// which the parsers report where it stands.
import type { RawTag } from './tagText';
import type { Span, SpanProblem } from './positions';

export type TokenKind = 'word' | 'number' | 'punct' | 'other';

export interface Token {
  kind: TokenKind;
  text: string;
  /** Offsets into the tag body; `end` exclusive. */
  start: number;
  end: number;
}

// Identifiers as in ECMA-262 §12.7 (Unicode ID_Start / ID_Continue, plus `$` and `_`).
const WORD = /[\p{ID_Start}$_][\p{ID_Continue}$\u200C\u200D]*/uy;
// Numbers as in JSON and JavaScript decimal literals, with an optional sign (ECMA-262 §12.9.3).
const NUMBER = /[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?/y;
const PUNCT = '[](),=.';

export function tokenize(body: string): Token[] {
  const tokens: Token[] = [];
  let i = 0;
  while (i < body.length) {
    const ch = body[i]!;
    if (/\s/.test(ch)) {
      i++;
      continue;
    }
    NUMBER.lastIndex = i;
    const num = /[0-9+\-.]/.test(ch) ? NUMBER.exec(body) : null;
    // A lone `.` is punctuation (as in `this.w`); `.5` is a number.
    if (num && num[0] !== '.' && /\d/.test(num[0])) {
      tokens.push({ kind: 'number', text: num[0], start: i, end: i + num[0].length });
      i += num[0].length;
      continue;
    }
    WORD.lastIndex = i;
    const word = WORD.exec(body);
    if (word) {
      tokens.push({ kind: 'word', text: word[0], start: i, end: i + word[0].length });
      i += word[0].length;
      continue;
    }
    // One whole code point, so a surrogate pair is never split.
    const cp = String.fromCodePoint(body.codePointAt(i)!);
    tokens.push({ kind: PUNCT.includes(cp) ? 'punct' : 'other', text: cp, start: i, end: i + cp.length });
    i += cp.length;
  }
  return tokens;
}

/** Walks the tokens of one tag body and turns body offsets into file spans. */
export class TagCursor {
  readonly tokens: Token[];
  private index = 0;

  constructor(readonly tag: RawTag) {
    this.tokens = tokenize(tag.body);
  }

  peek(ahead = 0): Token | undefined {
    return this.tokens[this.index + ahead];
  }

  next(): Token | undefined {
    const t = this.tokens[this.index];
    if (t) this.index++;
    return t;
  }

  /** Consumes the next token if it is this punctuation mark. */
  eat(punct: string): Token | undefined {
    const t = this.peek();
    if (t && t.kind === 'punct' && t.text === punct) return this.next();
    return undefined;
  }

  atEnd(): boolean {
    return this.index >= this.tokens.length;
  }

  /** File span of a token (or of a stretch of body offsets). */
  spanOf(token: { start: number; end: number }): Span {
    const offs = this.tag.bodyOffsets;
    const start = offs[Math.min(token.start, offs.length - 1)]!;
    const last = offs[Math.min(Math.max(token.end - 1, token.start), offs.length - 1)]!;
    return { start, end: token.end > token.start ? last + 1 : start };
  }

  /** A problem on a token, or on the whole tag when the token is missing. */
  problemAt(token: Token | undefined, message: string): SpanProblem {
    const span = token ? this.spanOf(token) : this.tag.span;
    return { ...span, message };
  }

  /** The rest of the body from this token on (for `= JSON`). */
  restFrom(bodyOffset: number): string {
    return this.tag.body.slice(bodyOffset);
  }
}
