// The backward's declared parameters against the call the check will make (README, "Annotating
// an op"): a default call that does not fit is made as the backward's own parameter names say when
// they settle it; otherwise the mistake is an annotation problem at the @backward tag that spells
// out the call and the fix. Correct declarations are left alone.
import assert from 'node:assert/strict';
import { discover, expectProblem, opNamed, withDoc } from './helpers';

describe('discovery: backward signature against the call', () => {
  it('backward (x, w, dy) for forward (w, x), no list: called as its parameter names say', () => {
    // Shape: the backward lists the forward's parameters in another order. The default call would
    // pass w where x is declared; the names spell out the call, so it is made that way.
    const text = withDoc(
      ['@backward scaleBackward', '@sample w f64[3]', '@sample x f64[3]'],
      'export function scale(w: Float64Array, x: Float64Array) { return x.map((v, i) => v * w[i]); }\n' +
        'export function scaleBackward(x: Float64Array, w: Float64Array, dy: Float64Array) { return [dy.map((g, i) => g * x[i]), dy.map((g, i) => g * w[i])]; }',
    );
    const op = opNamed(discover(text), 'scale');
    assert.deepEqual(op.problems, []);
    assert.deepEqual(op.backwardArgs, [{ kind: 'param', name: 'x' }, { kind: 'param', name: 'w' }, { kind: 'upstream' }]);
    assert.equal(op.backwardArgsFromNames, true);
  });

  it('the same backward under an explicit list that does not fit: a problem naming the list that does', () => {
    const text = withDoc(
      ['@backward scaleBackward(w, x, $dy)', '@sample w f64[3]', '@sample x f64[3]'],
      'export function scale(w: Float64Array, x: Float64Array) { return x.map((v, i) => v * w[i]); }\n' +
        'export function scaleBackward(x: Float64Array, w: Float64Array, dy: Float64Array) { return [dy, dy]; }',
    );
    const p = expectProblem(text, opNamed(discover(text), 'scale'), '@backward', /will call scaleBackward\(w, x, \$dy\) \(as the @backward list says\)/);
    assert.match(p.message, /declares \(x, w, dy\)/);
    assert.match(p.message, /`@backward scaleBackward\(x, w, \$dy\)`/);
  });

  it('shapes read from names: (dy, x) upstream first; (x, dy, eps) an option after dy; a loss without dy; a method taking x again', () => {
    const text = [
      withDoc(
        ['@backward cubeBackward', '@sample x f64[4]'],
        'export function cube(x: Float64Array) { return x.map((v) => v ** 3); }\nexport function cubeBackward(dy: Float64Array, x: Float64Array) { return x.map((v, i) => 3 * v * v * dy[i]); }',
      ),
      withDoc(
        ['@backward normBackward', '@sample x num[8]'],
        'export function norm(x: number[], eps = 1e-5): number[] { return x; }\nexport function normBackward(x: number[], dy: number[], eps = 1e-5): number[] { return dy; }',
      ),
      withDoc(
        ['@backward lossGrad', '@sample a num', '@sample b num'],
        'export function loss(a: number, b: number): number { return a * a * b; }\nexport function lossGrad(a: number, b: number) { return [2 * a * b, a * a]; }',
      ),
      'export class Gate {\n  w = new Float64Array(3);\n  /**\n   * @backward back\n   * @sample x f64[3]\n   */\n  run(x: Float64Array) { return x.map((v, i) => v * this.w[i]); }\n  back(x: Float64Array, dy: Float64Array) { return dy.map((g, i) => g * this.w[i]); }\n}\n',
    ].join('\n');
    const r = discover(text);
    const expected: Record<string, unknown[]> = {
      cube: [{ kind: 'upstream' }, { kind: 'param', name: 'x' }],
      norm: [{ kind: 'param', name: 'x' }, { kind: 'upstream' }, { kind: 'param', name: 'eps' }],
      loss: [
        { kind: 'param', name: 'a' },
        { kind: 'param', name: 'b' },
      ],
      'Gate.run': [{ kind: 'param', name: 'x' }, { kind: 'upstream' }],
    };
    for (const [name, args] of Object.entries(expected)) {
      const op = opNamed(r, name);
      assert.deepEqual(op.problems, [], name);
      assert.deepEqual(op.backwardArgs, args, name);
      assert.equal(op.backwardArgsFromNames, true, name);
    }
  });

  it('names that do not settle the call stay a problem: an output-like name, an unknown name, no dy for a forward declared to return an array', () => {
    const text = [
      withDoc(
        ['@backward tanhBackward', '@sample x f64[4]'],
        'export function tanh(x: Float64Array) { return x.map(Math.tanh); }\nexport function tanhBackward(x: Float64Array, y: Float64Array, dy: Float64Array) { return dy.map((g, i) => g * (1 - y[i] * y[i])); }',
      ),
      withDoc(
        ['@backward mixBackward', '@sample a f64[2]', '@sample b f64[2]'],
        'export function mix(a: Float64Array, b: Float64Array) { return a.map((v, i) => v * b[i]); }\nexport function mixBackward(a: Float64Array, cache: Float64Array) { return [cache, cache]; }',
      ),
      withDoc(
        ['@backward twiceBackward', '@sample x f64[4]'],
        'export function twice(x: Float64Array): Float64Array { return x.map((v) => 2 * v); }\nexport function twiceBackward(x: Float64Array) { return x.map(() => 2); }',
      ),
    ].join('\n');
    const r = discover(text);
    const tanhProblem = expectProblem(text, opNamed(r, 'tanh'), '@backward', /declares 3 required parameters but would receive 2/);
    assert.match(tanhProblem.message, /`@backward tanhBackward\(x, \$y, \$dy\)`/);
    expectProblem(text, opNamed(r, 'mix'), '@backward', /declares 2 parameters but would receive 3, so '\$dy' would be dropped/, 1);
    expectProblem(text, opNamed(r, 'twice'), '@backward', /declares 1 parameter but would receive 2, so '\$dy' would be dropped/, 2);
    for (const name of ['tanh', 'mix', 'twice']) assert.equal(opNamed(r, name).backwardArgsFromNames, undefined, name);
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
