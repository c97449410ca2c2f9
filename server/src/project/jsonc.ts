// JSON with comments, as editors write settings files: `//` and `/* */` comments and trailing
// commas are blanked out so JSON.parse reads the rest, and its error positions stay those of the text.

/**
 * `text` with every comment and every trailing comma (a comma whose next significant character
 * is `}` or `]`) replaced by spaces; newlines are kept, so a position means the same place in both.
 * Strings are left alone. An unterminated block comment is blanked to the end.
 */
export function blankJsoncExtras(text: string): string {
  const out = text.split('');
  let i = 0;
  /** Index of a comma seen since the last significant character, or -1. */
  let pendingComma = -1;
  const blank = (from: number, to: number): void => {
    for (let k = from; k < to; k++) if (out[k] !== '\n' && out[k] !== '\r') out[k] = ' ';
  };
  while (i < text.length) {
    const c = text[i]!;
    if (c === '"') {
      pendingComma = -1;
      i++;
      while (i < text.length && text[i] !== '"') i += text[i] === '\\' ? 2 : 1;
      i++;
    } else if (c === '/' && text[i + 1] === '/') {
      const end = text.indexOf('\n', i);
      const stop = end < 0 ? text.length : end;
      blank(i, stop);
      i = stop;
    } else if (c === '/' && text[i + 1] === '*') {
      const end = text.indexOf('*/', i + 2);
      const stop = end < 0 ? text.length : end + 2;
      blank(i, stop);
      i = stop;
    } else if (c === ',') {
      pendingComma = i;
      i++;
    } else if (c === '}' || c === ']') {
      if (pendingComma >= 0) out[pendingComma] = ' ';
      pendingComma = -1;
      i++;
    } else {
      if (!/\s/.test(c)) pendingComma = -1;
      i++;
    }
  }
  return out.join('');
}
