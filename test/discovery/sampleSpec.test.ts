// Every form of the `@sample` SPEC (docs/annotations.md, "@sample PARAM SPEC") read into a
// SampleSpec, and each malformed spec reported at the exact token inside the tag.
import assert from 'node:assert/strict';
import type { SampleSpec } from '../../server/src/model/types';
import { discover, expectProblem, opNamed, withDoc } from './helpers';

/** The spec discovery reads for `@sample x SPEC` on a one-parameter function. */
function specOf(spec: string): SampleSpec | undefined {
  const text = withDoc(['@backward fb', `@sample x ${spec}`], 'export function f(x: unknown) { return 0; }\nfunction fb() {}');
  const op = opNamed(discover(text), 'f');
  assert.deepEqual(op.problems, [], `spec '${spec}': ${JSON.stringify(op.problems)}`);
  return op.params[0]!.sample;
}

const random = (dtype: string, shape: number[], range: [number, number] = [-1, 1], avoid: number[] = [], fixed = false) => ({ kind: 'random', dtype, shape, range, avoid, fixed });

describe('discovery: @sample specs', () => {
  it('reads element types and shapes', () => {
    // docs/annotations.md: f64/f32/num/i32 take dimensions; num and int alone are scalars.
    assert.deepEqual(specOf('f64[64]'), random('f64', [64]));
    assert.deepEqual(specOf('f32[3, 4]'), random('f32', [3, 4]));
    assert.deepEqual(specOf('num[2,3,5]'), random('num', [2, 3, 5]));
    assert.deepEqual(specOf('num'), random('num', []));
    assert.deepEqual(specOf('i32[7]'), random('i32', [7]));
    assert.deepEqual(specOf('int'), random('int', []));
  });

  it('reads ranges with signs and exponents as JavaScript number literals', () => {
    // ECMA-262 §12.9.3 NumericLiteral (with a sign): each bound equals the binary64 value
    // (IEEE 754-2019, round to nearest) of the same literal in JavaScript.
    assert.deepEqual(specOf('f64[2] in [-6, 6]'), random('f64', [2], [-6, 6]));
    assert.deepEqual(specOf('num in [-2.5e-3, 1E+2]'), random('num', [], [-2.5e-3, 100]));
    assert.deepEqual(specOf('num in [.5, 7.]'), random('num', [], [0.5, 7]));
    assert.deepEqual(specOf('f64[2]in[0,1]'), random('f64', [2], [0, 1]));
    assert.deepEqual(specOf('int in [-3, 3]'), random('int', [], [-3, 3]));
    // 0.1 is not exactly representable in binary64; it must equal the literal's rounding.
    assert.equal((specOf('num in [0.1, 0.3]') as { range: number[] }).range[0], 0.1);
  });

  it('reads avoid lists and the fixed keyword, in any order', () => {
    assert.deepEqual(specOf('f64[4] in [-2, 2] avoid 0'), random('f64', [4], [-2, 2], [0]));
    assert.deepEqual(specOf('f64[4] avoid -1, 0, 1e-3 in [-2, 2]'), random('f64', [4], [-2, 2], [-1, 0, 1e-3]));
    assert.deepEqual(specOf('f64[4] fixed'), random('f64', [4], [-1, 1], [], true));
    assert.deepEqual(specOf('i32[3] in [0, 9] fixed'), random('i32', [3], [0, 9], [], true));
    assert.deepEqual(specOf('num fixed avoid 0.5'), random('num', [], [-1, 1], [0.5], true));
  });

  it('reads = JSON literals, including ones over several comment lines', () => {
    // RFC 8259 JSON texts: numbers, objects, arrays, strings, null.
    assert.deepEqual(specOf('= 1'), { kind: 'literal', value: 1 });
    assert.deepEqual(specOf('= {"eps": 1e-5}'), { kind: 'literal', value: { eps: 1e-5 } });
    assert.deepEqual(specOf('= [[1, 2], [3, 4]]'), {
      kind: 'literal',
      value: [
        [1, 2],
        [3, 4],
      ],
    });
    assert.deepEqual(specOf('= "mean"'), { kind: 'literal', value: 'mean' });
    assert.deepEqual(specOf('= null'), { kind: 'literal', value: null });
    const text = withDoc(['@backward fb', '@sample opts = {', '  "axis": 1,', '  "keep": [true, false]', '}'], 'export function f(opts: object) { return 0; }\nfunction fb() {}');
    assert.deepEqual(opNamed(discover(text), 'f').params[0]!.sample, { kind: 'literal', value: { axis: 1, keep: [true, false] } });
  });
});

/** A one-op fixture whose only problem is in this spec; returns text and op. */
function badSpec(spec: string) {
  const text = withDoc(['@backward fb', `@sample x ${spec}`], 'export function f(x: unknown) { return 0; }\nfunction fb() {}');
  const op = opNamed(discover(text), 'f');
  assert.equal(op.problems.length, 1, `spec '${spec}' should give exactly one problem: ${JSON.stringify(op.problems)}`);
  assert.equal(op.params[0]!.sample, undefined, 'a bad spec gives no sample');
  return { text, op };
}

describe('discovery: malformed @sample specs', () => {
  // Each expected position is where the offending token stands in the fixture text.
  it('unknown element type, with a suggestion for a near miss', () => {
    let { text, op } = badSpec('f46[3]');
    expectProblem(text, op, 'f46[3]', /unknown element type 'f46'; did you mean 'f64'\?/);
    ({ text, op } = badSpec('float[3]'));
    expectProblem(text, op, 'float[3]', /unknown element type 'float' \(f64, f32, num, i32 or int\)/);
    ({ text, op } = badSpec('[3]'));
    expectProblem(text, op, '[3]', /unknown element type '\['/);
  });

  it('missing dimensions', () => {
    let { text, op } = badSpec('f64');
    expectProblem(text, op, 'f64', /missing dimensions: write f64\[n\]/);
    ({ text, op } = badSpec('i32 in [0, 3]'));
    expectProblem(text, op, 'i32', /missing dimensions/);
    ({ text, op } = badSpec('f64[]'));
    expectProblem(text, op, ']', /missing dimension$/, 0);
    ({ text, op } = badSpec('f32[3,]'));
    expectProblem(text, op, ',]', /missing dimension$/, 0, 1);
    ({ text, op } = badSpec('f64[3'));
    expectProblem(text, op, 'f64[3', /expected ',' or '\]'/, 0, 4);
  });

  it('dimensions that are not positive integers', () => {
    let { text, op } = badSpec('f64[0]');
    expectProblem(text, op, '0]', /dimension '0' must be a positive integer/);
    ({ text, op } = badSpec('f64[2.5]'));
    expectProblem(text, op, '2.5', /must be a positive integer/);
    ({ text, op } = badSpec('f64[n]'));
    expectProblem(text, op, 'n]', /dimension 'n'/);
    ({ text, op } = badSpec('int[3]'));
    expectProblem(text, op, 'int[3]', /use i32\[\.\.\.\]/);
  });

  it('empty or reversed ranges, and non-integer bounds for integer types', () => {
    let { text, op } = badSpec('num in [1, -1]');
    expectProblem(text, op, '[1, -1]', /range \[1, -1\] is empty: lo must be below hi/);
    ({ text, op } = badSpec('f64[2] in [2, 2]'));
    expectProblem(text, op, '[2, 2]', /is empty/);
    ({ text, op } = badSpec('i32[2] in [0.5, 4]'));
    expectProblem(text, op, '[0.5, 4]', /integer range needs integer bounds/);
    ({ text, op } = badSpec('num in 0, 1'));
    expectProblem(text, op, '0, 1', /expected '\[lo, hi\]' after 'in'/);
    ({ text, op } = badSpec('num in [0 1]'));
    expectProblem(text, op, '1]', /expected ',' between lo and hi/);
    ({ text, op } = badSpec('num in [0, 1e999]'));
    expectProblem(text, op, '1e999', /expected a number, found '1e999'/);
  });

  it('unexpected words, with a suggestion for misspelled keywords', () => {
    let { text, op } = badSpec('f64[3] avod 0');
    expectProblem(text, op, 'avod', /unexpected 'avod'; did you mean 'avoid'\?/);
    ({ text, op } = badSpec('f64[3] banana'));
    expectProblem(text, op, 'banana', /unexpected 'banana' \(expected `in \[lo, hi\]`/);
    ({ text, op } = badSpec('f64[3] fixed fixed'));
    expectProblem(text, op, 'fixed', /'fixed' given twice/, 1);
    ({ text, op } = badSpec('f64[3] avoid'));
    expectProblem(text, op, 'avoid', /expected a number/);
  });

  it('bad JSON, pointing at the failing character', () => {
    // RFC 8259 §4: a member needs a value after the colon.
    let { text, op } = badSpec('= {"a": }');
    expectProblem(text, op, '}', /invalid JSON value: expected a value/);
    // RFC 8259 §7: strings use quotation marks (U+0022), not apostrophes.
    ({ text, op } = badSpec("= {'a': 1}"));
    expectProblem(text, op, "'a'", /invalid JSON value: expected a property name in double quotes/);
    // RFC 8259 §5: no comma before the closing bracket.
    ({ text, op } = badSpec('= [1, 2,]'));
    expectProblem(text, op, ',]', /expected a value/, 0, 1);
    // RFC 8259 §6: no leading zeros, so `01` stops after `0`.
    ({ text, op } = badSpec('= 01'));
    expectProblem(text, op, '01', /unexpected text after the value/, 0, 1);
    ({ text, op } = badSpec('='));
    expectProblem(text, op, 'x =\n', /missing JSON value after '='/, 0, 2);
  });

  it('bad JSON on a continuation line is placed on that line, past the comment prefix', () => {
    const text = withDoc(['@backward fb', '@sample x = {', '  "axis": 1,', '  "keep": [tru]', '}'], 'export function f(x: object) { return 0; }\nfunction fb() {}');
    const op = opNamed(discover(text), 'f');
    expectProblem(text, op, 'tru]', /expected a value/);
  });

  it('missing parameter name or spec', () => {
    const text = withDoc(['@backward fb', '@sample', '@sample x'], 'export function f(x: number) { return 0; }\nfunction fb() {}');
    const op = opNamed(discover(text), 'f');
    expectProblem(text, op, '@sample\n', /@sample needs a parameter name and a spec/);
    expectProblem(text, op, '@sample x', /@sample x: missing spec/);
  });
});
