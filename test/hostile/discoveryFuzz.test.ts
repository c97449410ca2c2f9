// Property tests (fast-check, fixed seeds, stated run counts) over whole real sources: the
// accuracy corpus (test/corpus/*.ts) and this suite's hostile workspace, mutated at random
// places and inside their annotations. Discovery must return, never throw, report positions
// inside the text, answer the same twice, and report a problem on the op whose tag was broken.
// (test/discovery/robustness.test.ts covers random JSDoc blocks and one small valid file.)
import assert from 'node:assert/strict';
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import fc from 'fast-check';
import { discoverOps, parserSafeText, type DiscoveryResult } from '../../server/src/discovery/index';
import { HOSTILE_FIXTURES, ROOT } from './workspace';

/** Runs per property: enough to reach every corpus file many times, quick on a shared 2-core machine. */
const WHOLE_SOURCE_RUNS = 500;
const ANNOTATION_RUNS = 500;
const BROKEN_TAG_RUNS = 300;

interface Source {
  name: string;
  text: string;
}

function sourcesIn(dir: string): Source[] {
  return readdirSync(dir)
    .filter((f) => f.endsWith('.ts'))
    .sort()
    .map((f) => ({ name: f, text: readFileSync(join(dir, f), 'utf8') }));
}

const SOURCES: Source[] = [...sourcesIn(join(ROOT, 'test', 'corpus')), ...sourcesIn(HOSTILE_FIXTURES)];

/** Line lengths by the line terminators TypeScript counts (ECMA-262 §12.3: LF, CR, CRLF, U+2028, U+2029). */
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

function assertInside(lengths: number[], what: string, p: { line: number; column: number }): void {
  const ok = Number.isInteger(p.line) && Number.isInteger(p.column) && p.line >= 1 && p.line <= lengths.length && p.column >= 1 && p.column <= lengths[p.line - 1]! + 1;
  assert.ok(ok, `${what} lies outside the text: ${JSON.stringify(p)}`);
}

/** Discovery on a text, with every contract of DiscoveryResult checked. */
function discoverChecked(name: string, text: string): DiscoveryResult {
  const result = discoverOps(`/fuzz/${name}`, text);
  assert.ok(Array.isArray(result.ops) && Array.isArray(result.fileProblems));
  const lengths = lineLengths(text);
  for (const p of result.fileProblems) {
    assertInside(lengths, 'file problem', p);
    assert.ok(p.message.length > 0);
  }
  for (const op of result.ops) {
    assertInside(lengths, `op ${op.forward}`, op);
    for (const p of op.problems) {
      assertInside(lengths, `problem of ${op.forward}`, p);
      assert.ok(p.message.length > 0, `empty message on ${op.forward}`);
    }
    for (const t of op.tags) assertInside(lengths, `@${t.tag} of ${op.forward}`, t);
  }
  assert.deepEqual(discoverOps(`/fuzz/${name}`, text), result, 'the same text gives the same answer');
  return result;
}

/** Fragments a half-written edit leaves behind: comment and tag syntax, brackets, quotes, line ends. */
const fragment = fc.oneof(
  fc.constantFrom(
    '/**',
    '*/',
    ' * ',
    '@backward',
    '@sample',
    '@samples',
    '@fixed',
    '@seed',
    '@tolerance',
    '@construct',
    'f64[',
    ']',
    '[3, 4]',
    'in [',
    '= {',
    '}',
    '{',
    '(',
    ')',
    '=>',
    '$dy',
    '$y',
    'this.',
    'class ',
    'function ',
    'export ',
    'async ',
    '`',
    '"',
    "'",
    ',',
    ';',
    '\n',
    '\r\n',
    '\u2028',
    '\t',
    '\ud800',
    '𝑥',
  ),
  fc.string({ maxLength: 8 }),
);

/** Up to eight insertions, deletions or replacements anywhere in the text. */
const edits = fc.array(fc.tuple(fc.nat(), fc.nat({ max: 12 }), fragment), { minLength: 1, maxLength: 8 });

function applyEdits(text: string, list: Array<[number, number, string]>, region?: [number, number]): string {
  let s = text;
  const lo = region?.[0] ?? 0;
  let hi = region?.[1] ?? text.length;
  for (const [pos, del, ins] of list) {
    const span = Math.max(1, hi - lo + 1);
    const i = Math.min(s.length, lo + (pos % span));
    s = s.slice(0, i) + ins + s.slice(i + del);
    hi = Math.max(lo, hi + ins.length - del);
  }
  return s;
}

/** [start, end) offsets of every JSDoc block holding @backward. */
function annotationBlocks(text: string): Array<[number, number]> {
  const blocks: Array<[number, number]> = [];
  const re = /\/\*\*[\s\S]*?\*\//g;
  for (let m = re.exec(text); m; m = re.exec(text)) if (m[0].includes('@backward')) blocks.push([m.index, m.index + m[0].length]);
  return blocks;
}

describe('discovery fuzzing on whole real sources (fast-check)', function () {
  this.timeout(120_000);

  it(`the sources themselves are discovered without a file problem (${SOURCES.length} files)`, () => {
    assert.ok(SOURCES.length >= 20, `found ${SOURCES.length} sources`);
    for (const src of SOURCES) {
      const r = discoverChecked(src.name, src.text);
      if (src.name !== 'syntaxError.ts') assert.deepEqual(r.fileProblems, [], src.name);
    }
  });

  it("a doc comment ending in 'word-*/' is read, not hung on (TypeScript 6.0.3's JSDoc scanner loops there)", () => {
    // Found by the property below: the compiler's hyphenated-identifier loop runs past the
    // comment's end. Each of these hung createSourceFile before discovery defused them.
    for (const trap of ['/** a-*/', '/** @see sluice-*/\nexport function f() {}', '/**a--*/ x', '/** é-*/', '/** @x a-*//']) {
      const safe = parserSafeText(trap);
      assert.equal(safe.length, trap.length, 'every offset stays where it was');
      assert.doesNotMatch(safe, /\w-+\*\//u);
      void discoverChecked('trap.ts', trap);
    }
    const r = discoverChecked('trap.ts', '/**\n * @backward fb\n * @sample x num\n * @see gate-*/\nexport function f(x: number) { return x; }\nfunction fb() {}\n');
    assert.equal(r.ops.length, 1);
    assert.deepEqual(r.ops[0]!.problems, []);
  });

  it(`random edits anywhere in a source (${WHOLE_SOURCE_RUNS} runs, seed 5501)`, () => {
    const arb = fc.tuple(fc.constantFrom(...SOURCES), edits);
    fc.assert(
      fc.property(arb, ([src, list]) => void discoverChecked(src.name, applyEdits(src.text, list))),
      { seed: 5501, numRuns: WHOLE_SOURCE_RUNS, endOnFailure: true },
    );
  });

  it(`random edits inside one annotation of a source (${ANNOTATION_RUNS} runs, seed 5502)`, () => {
    const annotated = SOURCES.filter((s) => annotationBlocks(s.text).length > 0);
    const arb = fc.tuple(fc.constantFrom(...annotated), fc.nat(), edits);
    fc.assert(
      fc.property(arb, ([src, which, list]) => {
        const blocks = annotationBlocks(src.text);
        void discoverChecked(src.name, applyEdits(src.text, list, blocks[which % blocks.length]));
      }),
      { seed: 5502, numRuns: ANNOTATION_RUNS, endOnFailure: true },
    );
  });

  it(`a @sample tag broken at random gets a problem on its own op (${BROKEN_TAG_RUNS} runs, seed 5503)`, () => {
    // Element types that are not ours: f65, F64, float, tensor, ... (docs/annotations.md lists the valid ones).
    const badType = fc.constantFrom('f65', 'F64', 'float', 'f6', 'double', 'tensor', 'i64', 'f64x', 'numb');
    const sampled = SOURCES.filter((s) => /@sample \w+ (f64|f32|num|i32|int)\b/.test(s.text) && s.name !== 'annotations.ts');
    const arb = fc.tuple(fc.constantFrom(...sampled), fc.nat(), badType);
    fc.assert(
      fc.property(arb, ([src, which, bad]) => {
        const sites = [...src.text.matchAll(/@sample (\w+) (f64|f32|num|i32|int)\b/g)];
        const site = sites[which % sites.length]!;
        const at = site.index! + site[0].length - site[2]!.length;
        const text = src.text.slice(0, at) + bad + src.text.slice(at + site[2]!.length);
        const line = text.slice(0, at).split('\n').length;
        const r = discoverChecked(src.name, text);
        const owner = r.ops.find((op) => op.tags.some((t) => t.tag === 'sample' && t.line === line));
        assert.ok(owner, `no op owns the @sample on line ${line} of ${src.name}`);
        assert.ok(
          owner.problems.some((p) => p.line === line && p.message.includes(bad)),
          `${src.name}:${line}: ${JSON.stringify(owner.problems)}`,
        );
      }),
      { seed: 5503, numRuns: BROKEN_TAG_RUNS, endOnFailure: true },
    );
  });
});
