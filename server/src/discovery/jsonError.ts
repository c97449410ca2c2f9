// Finds where a JSON text first breaks the grammar of RFC 8259, with a short reason, so a bad
// `@sample x = JSON` is pointed at the exact character whatever the runtime's own message says.
// Iterative (an explicit stack), so deep nesting cannot overflow the call stack.

export interface JsonSyntaxError {
  /** Offset of the first character that cannot continue a valid JSON text. */
  offset: number;
  message: string;
}

const WS = new Set([' ', '\t', '\n', '\r']);
const ESCAPES = new Set(['"', '\\', '/', 'b', 'f', 'n', 'r', 't']);
// RFC 8259 §6: -? int frac? exp?, int = 0 | [1-9] digits.
const NUMBER = /-?(?:0|[1-9]\d*)(?:\.\d+)?(?:[eE][+-]?\d+)?/y;

/** The first syntax error of `text` as JSON, or undefined when it is a valid JSON text. */
export function findJsonSyntaxError(text: string): JsonSyntaxError | undefined {
  let i = 0;
  const skip = () => {
    while (i < text.length && WS.has(text[i]!)) i++;
  };
  const fail = (message: string): JsonSyntaxError => ({ offset: Math.min(i, Math.max(0, text.length - 1)), message });
  /** Open containers: '{' or '['. */
  const stack: string[] = [];
  // State: expecting a value (after '[', ',' in array, ':' or at the start).
  let wantValue = true;
  for (;;) {
    skip();
    if (wantValue) {
      if (i >= text.length) return fail('expected a value, found the end');
      const ch = text[i]!;
      if (ch === '{' || ch === '[') {
        stack.push(ch);
        i++;
        skip();
        const close = ch === '{' ? '}' : ']';
        if (text[i] === close) {
          stack.pop();
          i++;
          wantValue = false;
          continue;
        }
        if (ch === '{') {
          const err = readKey();
          if (err) return err;
        }
        continue;
      }
      const err = readScalar();
      if (err) return err;
      wantValue = false;
      continue;
    }
    // After a value: close, comma, or the end.
    const top = stack[stack.length - 1];
    if (top === undefined) return i < text.length ? fail('unexpected text after the value') : undefined;
    const close = top === '{' ? '}' : ']';
    if (text[i] === close) {
      stack.pop();
      i++;
      continue;
    }
    if (text[i] === ',') {
      i++;
      if (top === '{') {
        skip();
        const err = readKey();
        if (err) return err;
      }
      wantValue = true;
      continue;
    }
    return fail(i >= text.length ? `expected ',' or '${close}', found the end` : `expected ',' or '${close}'`);
  }

  /** `"key" :` inside an object; leaves `wantValue` set. */
  function readKey(): JsonSyntaxError | undefined {
    skip();
    if (text[i] !== '"') return fail('expected a property name in double quotes');
    const err = readString();
    if (err) return err;
    skip();
    if (text[i] !== ':') return fail("expected ':' after the property name");
    i++;
    wantValue = true;
    return undefined;
  }

  function readScalar(): JsonSyntaxError | undefined {
    const ch = text[i]!;
    if (ch === '"') return readString();
    for (const word of ['true', 'false', 'null']) {
      if (text.startsWith(word, i)) {
        i += word.length;
        return undefined;
      }
    }
    NUMBER.lastIndex = i;
    const m = NUMBER.exec(text);
    if (m && m[0] !== '-' && m[0].length > 0) {
      i += m[0].length;
      return undefined;
    }
    return fail('expected a value (number, string, true, false, null, object or array)');
  }

  function readString(): JsonSyntaxError | undefined {
    i++; // opening quote
    while (i < text.length) {
      const ch = text[i]!;
      if (ch === '"') {
        i++;
        return undefined;
      }
      if (ch.charCodeAt(0) < 0x20) return fail('control character inside a string');
      if (ch === '\\') {
        const e = text[i + 1];
        if (e === 'u') {
          if (!/^[0-9a-fA-F]{4}$/.test(text.slice(i + 2, i + 6))) {
            i++;
            return fail('bad \\u escape: expected four hex digits');
          }
          i += 6;
          continue;
        }
        if (e === undefined || !ESCAPES.has(e)) {
          i++;
          return fail('bad escape in a string');
        }
        i += 2;
        continue;
      }
      i++;
    }
    return fail('unterminated string');
  }
}
