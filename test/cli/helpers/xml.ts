// A small, strict XML 1.0 reader for tests: enough of W3C XML 1.0 (5th ed.) to decide whether
// a JUnit file is well-formed and to read it back. It throws on the first violation, with its offset.

export interface XmlElement {
  name: string;
  attributes: Record<string, string>;
  children: XmlElement[];
  /** Character data directly inside the element (text and CDATA), decoded. */
  text: string;
}

const NAME = /^[A-Za-z_:][-A-Za-z0-9_:.]*/;
/** XML 1.0 §2.2 Char: tab, LF, CR, and U+0020–U+D7FF, U+E000–U+FFFD, U+10000–U+10FFFF. */
const NOT_A_CHAR = /[^\t\n\r\u0020-\uD7FF\uE000-\uFFFD\u{10000}-\u{10FFFF}]/u;
const PREDEFINED: Record<string, string> = { amp: '&', lt: '<', gt: '>', quot: '"', apos: "'" };

/** Parses a document; throws Error("... at offset N") when it is not well-formed. */
export function parseXml(input: string): XmlElement {
  const bad = NOT_A_CHAR.exec(input);
  if (bad) throw new Error(`character U+${bad[0].codePointAt(0)!.toString(16)} is not allowed in XML at offset ${bad.index}`);
  // §2.11: line ends are normalised before parsing.
  const text = input.replace(/^\uFEFF/, '').replace(/\r\n?/g, '\n');
  let pos = 0;

  const fail = (what: string): never => {
    throw new Error(`${what} at offset ${pos}`);
  };
  const startsWith = (s: string): boolean => text.startsWith(s, pos);
  const skipSpace = (): void => {
    while (pos < text.length && /[ \t\n]/.test(text[pos]!)) pos++;
  };
  const readName = (): string => {
    const m = NAME.exec(text.slice(pos, pos + 200));
    if (!m) fail('expected a name');
    pos += m![0].length;
    return m![0];
  };
  const skipUntil = (end: string, what: string): string => {
    const at = text.indexOf(end, pos);
    if (at < 0) fail(`unterminated ${what}`);
    const body = text.slice(pos, at);
    pos = at + end.length;
    return body;
  };
  /** Comments, processing instructions and space between markup (§2.8 Misc). */
  const skipMisc = (): void => {
    for (;;) {
      skipSpace();
      if (startsWith('<!--')) {
        pos += 4;
        const body = skipUntil('-->', 'comment');
        if (body.includes('--')) fail('"--" inside a comment');
      } else if (startsWith('<?')) {
        pos += 2;
        const target = readName();
        if (target.toLowerCase() === 'xml') fail('XML declaration not at the start');
        skipUntil('?>', 'processing instruction');
      } else return;
    }
  };
  /** Decodes references in text or an attribute value; `&` must start a valid one (§4.1). */
  const decode = (raw: string, start: number): string =>
    raw.replace(/&([^;]*);?/g, (whole, body: string, offset: number) => {
      if (!whole.endsWith(';')) {
        pos = start + offset;
        fail('"&" that starts no reference');
      }
      if (body in PREDEFINED) return PREDEFINED[body]!;
      const num = /^#(x[0-9a-fA-F]+|[0-9]+)$/.exec(body);
      if (!num) {
        pos = start + offset;
        fail(`unknown entity &${body};`);
      }
      const code = num![1]!.startsWith('x') ? parseInt(num![1]!.slice(1), 16) : parseInt(num![1]!, 10);
      const ch = code <= 0x10ffff ? String.fromCodePoint(code) : '';
      if (ch === '' || NOT_A_CHAR.test(ch)) {
        pos = start + offset;
        fail(`reference to a character XML does not allow (&${body};)`);
      }
      return ch;
    });

  const readElement = (): XmlElement => {
    if (!startsWith('<')) fail('expected "<"');
    pos++;
    const name = readName();
    const attributes: Record<string, string> = {};
    for (;;) {
      const hadSpace = /[ \t\n]/.test(text[pos] ?? '');
      skipSpace();
      if (startsWith('/>')) {
        pos += 2;
        return { name, attributes, children: [], text: '' };
      }
      if (startsWith('>')) {
        pos++;
        break;
      }
      if (!hadSpace) fail('expected space before an attribute');
      const attr = readName();
      skipSpace();
      if (!startsWith('=')) fail(`expected "=" after attribute ${attr}`);
      pos++;
      skipSpace();
      const quote = text[pos];
      if (quote !== '"' && quote !== "'") fail('expected a quoted attribute value');
      pos++;
      const valueStart = pos;
      const raw = skipUntil(quote!, 'attribute value');
      if (raw.includes('<')) fail('"<" inside an attribute value');
      if (attr in attributes) fail(`attribute ${attr} given twice`);
      // §3.3.3: literal white space in a value becomes a space; references keep theirs.
      attributes[attr] = decode(raw.replace(/[\t\n]/g, ' '), valueStart);
    }
    const children: XmlElement[] = [];
    let content = '';
    for (;;) {
      if (pos >= text.length) fail(`element <${name}> is not closed`);
      if (startsWith('</')) {
        pos += 2;
        const closing = readName();
        if (closing !== name) fail(`</${closing}> closes <${name}>`);
        skipSpace();
        if (!startsWith('>')) fail('expected ">"');
        pos++;
        return { name, attributes, children, text: content };
      }
      if (startsWith('<!--')) {
        pos += 4;
        skipUntil('-->', 'comment');
      } else if (startsWith('<![CDATA[')) {
        pos += 9;
        content += skipUntil(']]>', 'CDATA section');
      } else if (startsWith('<?')) {
        pos += 2;
        skipUntil('?>', 'processing instruction');
      } else if (startsWith('<')) {
        children.push(readElement());
      } else {
        const start = pos;
        const next = text.indexOf('<', pos);
        const raw = text.slice(pos, next < 0 ? text.length : next);
        if (raw.includes(']]>')) fail('"]]>" in character data');
        pos += raw.length;
        content += decode(raw, start);
      }
    }
  };

  if (startsWith('<?xml')) {
    pos += 5;
    const decl = skipUntil('?>', 'XML declaration');
    if (!/^\s+version\s*=\s*(["'])1\.[0-9]+\1/.test(decl)) fail('XML declaration without a version');
  }
  skipMisc();
  if (startsWith('<!DOCTYPE')) fail('document type declarations are not expected here');
  const root = readElement();
  skipMisc();
  if (pos < text.length) fail('content after the root element');
  return root;
}

/** Every element named `name` below (and including) `el`, in document order. */
export function findAll(el: XmlElement, name: string): XmlElement[] {
  const out: XmlElement[] = el.name === name ? [el] : [];
  for (const child of el.children) out.push(...findAll(child, name));
  return out;
}
