// Reads the raw text of one JSDoc tag out of the source: its name and its body with the
// comment's ` * ` line prefixes removed, keeping the file offset of every body character so a
// mistake can be pointed at exactly.
import ts from 'typescript';
import type { Span } from './positions';

/** One JSDoc tag as written, with offsets into the file. */
export interface RawTag {
  /** Tag name without `@`, as written (case kept). */
  name: string;
  /** From `@` to the end of the name. */
  nameSpan: Span;
  /** From `@` to the last non-blank character of the tag. */
  span: Span;
  /** The text after the name, line prefixes removed, newlines kept. */
  body: string;
  /** File offset of each body character, plus one entry for the end of the body. */
  bodyOffsets: number[];
}

/** Reads a tag node of the compiler's JSDoc tree from the file text. */
export function readRawTag(text: string, tag: ts.JSDocTag): RawTag {
  const at = tag.tagName.pos - 1 >= 0 && text[tag.tagName.pos - 1] === '@' ? tag.tagName.pos - 1 : tag.pos;
  const nameEnd = tag.tagName.end;
  let stop = Math.min(tag.end, text.length);
  // The last tag of a comment can reach into the closing `*/`: cut there.
  const close = text.indexOf('*/', nameEnd);
  if (close !== -1 && close < stop) stop = close;

  // The body is built from whole line pieces (cheap), remembering where each piece starts.
  const pieces: string[] = [];
  const bodyOffsets: number[] = [];
  let i = nameEnd;
  while (i < stop) {
    const nl = text.indexOf('\n', i);
    const lineEnd = nl === -1 || nl >= stop ? stop : nl + 1;
    pieces.push(text.slice(i, lineEnd));
    for (let k = i; k < lineEnd; k++) bodyOffsets.push(k);
    i = lineEnd;
    if (lineEnd < stop) {
      // Continuation line: skip indentation and one leading `*`, as JSDoc readers do.
      while (i < stop && (text[i] === ' ' || text[i] === '\t' || text[i] === '\r')) i++;
      if (i < stop && text[i] === '*') i++;
    }
  }
  let body = pieces.join('');
  // Drop trailing blanks so the tag's range ends at its last visible character.
  let keep = body.length;
  while (keep > 0 && /\s/.test(body[keep - 1]!)) keep--;
  const bodyEnd = keep > 0 ? bodyOffsets[keep - 1]! + 1 : nameEnd;
  body = body.slice(0, keep);
  bodyOffsets.length = keep;
  bodyOffsets.push(bodyEnd);
  return {
    name: tag.tagName.text,
    nameSpan: { start: at, end: nameEnd },
    span: { start: at, end: bodyEnd },
    body,
    bodyOffsets,
  };
}

/** Markdown code fence openers; an odd count before a tag means the tag is sample code. */
const FENCE = /```|~~~/g;

/**
 * The tags of a node's JSDoc, in source order, leaving out lines that the compiler reads as
 * tags but that sit inside a fenced code block (an `@example` showing our own tags).
 */
export function readDocTags(text: string, host: ts.Node): RawTag[] {
  const out: RawTag[] = [];
  for (const tag of ts.getJSDocTags(host)) {
    const doc = tag.parent;
    const docStart = doc && ts.isJSDoc(doc) ? doc.pos : tag.pos;
    const docText = text.slice(docStart, tag.pos);
    // Most comments have no fence at all: skip the count then.
    if (docText.includes('```') || docText.includes('~~~')) {
      const before = docText.match(FENCE);
      if (before && before.length % 2 === 1) continue;
    }
    const raw = readRawTag(text, tag);
    // A tag starts a JSDoc line, or follows another tag on its line (`/** @backward f @sample x num */`);
    // `@word` inside a description's prose is text.
    const prev = out[out.length - 1];
    const followsTag = prev !== undefined && !text.slice(prev.nameSpan.start, raw.nameSpan.start).includes('\n');
    if (!followsTag && !startsDocLine(text, raw.nameSpan.start)) continue;
    out.push(raw);
  }
  return out;
}

/** Whether only the comment's `/**`, a leading `*` and blanks stand before `at` on its line. */
function startsDocLine(text: string, at: number): boolean {
  let i = at - 1;
  while (i >= 0 && (text[i] === ' ' || text[i] === '\t')) i--;
  if (i >= 0 && text[i] === '*') {
    i--;
    if (i >= 1 && text[i] === '*' && text[i - 1] === '/') return true; // `/** @tag`
    while (i >= 0 && (text[i] === ' ' || text[i] === '\t')) i--;
  }
  return i < 0 || text[i] === '\n' || text[i] === '\r';
}
