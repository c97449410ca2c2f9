// The backward's declared parameters against the call the check will make (README, "Annotating
// an op": mistakes get a diagnosis): each mistake seen in user code is an annotation problem at the
// @backward tag that spells out the call and the fix; correct declarations are left alone.
import assert from 'node:assert/strict';
import { discover, expectProblem, opNamed, withDoc } from './helpers';

describe('discovery: backward signature against the call', () => {
  it('backward (x, w, dy) for forward (w, x): names the swap and the explicit list that fixes it', () => {
    // Shape: the backward lists the forward's parameters in another order.
    const text = withDoc(
      ['@backward scaleBackward', '@sample w f64[3]', '@sample x f64[3]'],
      'export function scale(w: Float64Array, x: Float64Array) { return x.map((v, i) => v * w[i]); }\n' +
        'export function scaleBackward(x: Float64Array, w: Float64Array, dy: Float64Array) { return [dy.map((g, i) => g * x[i]), dy.map((g, i) => g * w[i])]; }',
    );
    const p = expectProblem(text, opNamed(discover(text), 'scale'), '@backward', /will call scaleBackward\(w, x, \$dy\)/);
    assert.match(p.message, /every forward parameter, then `\$dy`/);
    assert.match(p.message, /declares \(x, w, dy\)/);
    assert.match(p.message, /`@backward scaleBackward\(x, w, \$dy\)`/);
  });

  it('backward (dy, x): the upstream gradient declared first', () => {
    // Shape: upstream gradient first, as some frameworks order it.
    const text = withDoc(
      ['@backward cubeBackward', '@sample x f64[4]'],
      'export function cube(x: Float64Array) { return x.map((v) => v ** 3); }\nexport function cubeBackward(dy: Float64Array, x: Float64Array) { return x.map((v, i) => 3 * v * v * dy[i]); }',
    );
    const p = expectProblem(text, opNamed(discover(text), 'cube'), '@backward', /parameter 1 is 'dy', which looks like the upstream gradient/);
    assert.match(p.message, /`@backward cubeBackward\(\$dy, x\)`/);
  });

  it('a backward missing a parameter: the count, not a later shape error', () => {
    // Shape: the backward forgot the second forward parameter.
    const text = withDoc(
      ['@backward mixBackward', '@sample a f64[2]', '@sample b f64[2]'],
      'export function mix(a: Float64Array, b: Float64Array) { return a.map((v, i) => v * b[i]); }\nexport function mixBackward(a: Float64Array, dy: Float64Array) { return [dy, dy]; }',
    );
    expectProblem(text, opNamed(discover(text), 'mix'), '@backward', /declares 2 parameters but would receive 3, so '\$dy' would be dropped/);
  });

  it('a method backward (x, dy) under the method default ($dy alone) says which default applies', () => {
    // Shape: a layer method whose backward takes the input again.
    const text =
      'export class Gate {\n  w = new Float64Array(3);\n  /**\n   * @backward back\n   * @sample x f64[3]\n   */\n  run(x: Float64Array) { return x.map((v, i) => v * this.w[i]); }\n  back(x: Float64Array, dy: Float64Array) { return dy.map((g, i) => g * this.w[i]); }\n}\n';
    const p = expectProblem(text, opNamed(discover(text), 'Gate.run'), '@backward', /will call back\(\$dy\) \(the default for a method: `\$dy` alone\)/);
    assert.match(p.message, /`@backward back\(x, \$dy\)`/);
  });

  it('declared types: a number where the call passes an array', () => {
    // Shape: parameter names that say nothing, types that do.
    const text = withDoc(
      ['@backward sqBackward', '@sample x f64[4]'],
      'export function sq(x: Float64Array): Float64Array { return x.map((v) => v * v); }\nexport function sqBackward(a: number, g: Float64Array) { return g; }',
    );
    expectProblem(text, opNamed(discover(text), 'sq'), '@backward', /parameter 1 \('a'\) is declared a number, but 'x' is an array/);
  });

  it('leaves fitting declarations alone: defaults, explicit lists, optional extras, rest parameters', () => {
    const text = [
      withDoc(
        ['@backward aBack', '@sample x f64[2]'],
        'export function a(x: Float64Array) { return x; }\nexport function aBack(x: Float64Array, dy: Float64Array, scratch?: Float64Array) { return dy; }',
      ),
      withDoc(
        ['@backward bBack($y, $dy)', '@sample x f64[2]'],
        'export function b(x: Float64Array) { return x; }\nexport function bBack(y: Float64Array, gradOutput: Float64Array) { return gradOutput; }',
      ),
      withDoc(['@backward cBack', '@sample x f64[2]'], 'export function c(x: Float64Array) { return x; }\nexport function cBack(...args: Float64Array[]) { return args[1]; }'),
      'export class L {\n  /**\n   * @backward back\n   * @sample x f64[2]\n   */\n  f(x: Float64Array) { return x; }\n  back(dy: Float64Array) { return dy; }\n}\n',
    ].join('\n');
    const r = discover(text);
    for (const name of ['a', 'b', 'c', 'L.f']) assert.deepEqual(opNamed(r, name).problems, [], name);
  });
});
