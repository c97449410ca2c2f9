// Property tests (fast-check, fixed seeds): whatever the text — random or mutated annotations
// inside a JSDoc, random source garbage — discoverOps returns, never throws, gives the same
// answer twice, and every position it reports lies inside the text.
import assert from 'node:assert/strict';
import fc from 'fast-check';
import { discoverOps, type DiscoveryResult } from '../../server/src/discovery/index';

/**
 * Start offset of each line, by ECMA-262 §12.3 LineTerminator (LF, CR, U+2028, U+2029; CRLF
 * counts once) — the rule TypeScript applies when it numbers lines.
 */
function lineLengths(text: string): number[] {
  const lengths: number[] = [];
  let start = 0;
  for (let i = 0; i < text.length; i++) {
    const ch = text[i];
    if (ch === '\n' || ch === '\r' || ch === '\u2028' || ch === '\u2029') {
      lengths.push(i - start);
      if (ch === '\r' && text[i + 1] === '\n') i++;
      start = i + 1;
    }
  }
  lengths.push(text.length - start);
  return lengths;
}

function assertInside(text: string, what: string, p: { line: number; column: number; endLine?: number; endColumn?: number }): void {
  const lines = lineLengths(text);
  const ok = (line: number, column: number) =>
    Number.isInteger(line) && Number.isInteger(column) && line >= 1 && line <= lines.length && column >= 1 && column <= lines[line - 1]! + 1;
  assert.ok(ok(p.line, p.column), `${what} starts outside the text: ${JSON.stringify(p)}`);
  if (p.endLine !== undefined && p.endColumn !== undefined) {
    assert.ok(ok(p.endLine, p.endColumn), `${what} ends outside the text: ${JSON.stringify(p)}`);
    assert.ok(p.endLine > p.line || (p.endLine === p.line && p.endColumn >= p.column), `${what} ends before it starts: ${JSON.stringify(p)}`);
  }
}

function checkResult(text: string, r: DiscoveryResult): void {
  for (const p of r.fileProblems) assertInside(text, 'file problem', p);
  for (const op of r.ops) {
    assertInside(text, `op ${op.forward}`, op);
    for (const p of op.problems) {
      assertInside(text, `problem of ${op.forward}`, p);
      assert.ok(p.message.length > 0);
    }
    for (const t of op.tags) assertInside(text, `tag @${t.tag} of ${op.forward}`, t);
    if (op.backwardLocation) assertInside(text, `backward of ${op.forward}`, op.backwardLocation);
  }
}

function run(text: string): void {
  const first = discoverOps('/work/fixture/random.ts', text);
  checkResult(text, first);
  // Pure: the same text gives the same answer.
  assert.deepEqual(discoverOps('/work/fixture/random.ts', text), first);
}

// Pieces of annotation: tag names (ours, near misses, ordinary ones) and body tokens.
const tagName = fc.constantFrom(
  'backward',
  'sample',
  'samples',
  'fixed',
  'construct',
  'tolerance',
  'seed',
  'gradientField',
  'gradientfield',
  'sampel',
  'backwards',
  'Seed',
  'param',
  'example',
  'returns',
  'x',
  '',
);
const bodyToken = fc.oneof(
  fc.constantFrom(
    'x',
    'y',
    'this.w',
    'this.dw',
    '#',
    'this',
    '.',
    '$y',
    '$dy',
    '$q',
    'fb',
    'f64',
    'f32',
    'num',
    'i32',
    'int',
    'f16',
    '[',
    ']',
    '(',
    ')',
    ',',
    '=',
    'in',
    'avoid',
    'fixed',
    '-1',
    '1e-5',
    '0',
    '3',
    '2.5',
    '{',
    '}',
    '"a"',
    ':',
    'null',
    '```',
    '*/',
    '/*',
    '@',
    '\n',
    ' * ',
    '\\',
    '\u2028',
    '𝑥',
  ),
  fc.string({ maxLength: 6 }),
  fc.double().map(String),
);
const tagLine = fc.tuple(tagName, fc.array(bodyToken, { maxLength: 8 })).map(([n, toks]) => `@${n} ${toks.join(' ')}`);
const declaration = fc.constantFrom(
  'export function f(x: Float64Array, y: number): Float64Array { return x; }',
  'const f = (x: number, ...r: number[]) => x;',
  'export const f = function (x) { return x; };',
  'class C {\n  DOC\n  m(x: number) { return x; }\n  fb() {}\n}',
  'function outer() {\n  DOC\n  function inner(x) { return x; }\n}',
  'export default function (x: number) { return x; }',
);

const annotated = fc.tuple(fc.array(tagLine, { maxLength: 8 }), declaration).map(([lines, decl]) => {
  const doc = `/**\n${lines.map((l) => ` * ${l}`).join('\n')}\n */`;
  const body = decl.includes('DOC') ? decl.replace('DOC', doc) : `${doc}\n${decl}`;
  return `import { g } from './g';\nfunction fb(x: number, dy: number) { return dy; }\n${body}\n`;
});

const VALID = `/**
 * @backward fb(x, $y, $dy)
 * @sample x f64[3, 4] in [-2, 2] avoid 0 fixed
 * @sample opts = {"eps": 1e-5, "axis": [1, 2]}
 * @tolerance 1e-6
 * @seed 7
 */
export function f(x: Float64Array, opts: object): Float64Array { return x; }
function fb() {}
class C {
  /**
   * @backward mb(this.w, $dy)
   * @sample this.w num[2]
   * @construct make
   * @sample x int in [0, 3]
   */
  m(x: number): number { return x; }
  mb() {}
}
function make() { return new C(); }
`;

/** A valid file with random edits: insertions, deletions and replacements of short strings. */
const mutated = fc.array(fc.tuple(fc.nat(), fc.nat({ max: 4 }), fc.oneof(bodyToken, fc.constantFrom('', '@', '*', '/', '\r\n'))), { minLength: 1, maxLength: 6 }).map((edits) => {
  let s = VALID;
  for (const [pos, del, ins] of edits) {
    const i = pos % (s.length + 1);
    s = s.slice(0, i) + ins + s.slice(i + del);
  }
  return s;
});

describe('discovery: never throws, positions always inside the text (fast-check)', () => {
  it('random annotations inside a JSDoc', () => {
    fc.assert(fc.property(annotated, run), { seed: 1101, numRuns: 400 });
  });

  it('random edits of a valid annotated file', () => {
    fc.assert(fc.property(mutated, run), { seed: 2202, numRuns: 400 });
  });

  it('random source garbage, including lone surrogates and unusual line ends', () => {
    const garbage = fc.oneof(
      fc.string({ unit: 'binary', maxLength: 300 }),
      fc
        .array(
          fc.constantFrom(
            '/**',
            '*/',
            ' * @backward',
            ' @sample x',
            'function',
            'class',
            '{',
            '}',
            '(',
            ')',
            '\n',
            '\r',
            '\u2029',
            '\ud800',
            '`',
            '"',
            "'",
            '=>',
            'const f =',
            '@seed',
          ),
          { maxLength: 60 },
        )
        .map((a) => a.join(' ')),
    );
    fc.assert(fc.property(garbage, run), { seed: 3303, numRuns: 400 });
  });

  it('inputs that are not strings at all do not throw either', () => {
    // Callers are typed, but the boundary must hold even for a JavaScript caller.
    for (const bad of [undefined, null, 42, {}]) {
      const r = discoverOps('/x.ts', bad as unknown as string);
      assert.ok(Array.isArray(r.ops) && Array.isArray(r.fileProblems));
    }
  });
});
