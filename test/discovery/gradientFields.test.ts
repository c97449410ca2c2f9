// `@gradientField PARAM this.FIELD` (docs/annotations.md): read onto the @backward op of a method,
// and every misuse a problem at the exact line and column of the offending tag or token, with
// what to write instead (helpers.at counts positions by plain string search).
import assert from 'node:assert/strict';
import { discover, expectProblem, opNamed } from './helpers';

/** A Linear layer whose forward carries `tags` (one per JSDoc line). */
function layer(tags: string[], extra = ''): string {
  return `export class Linear {
  W = new Float64Array(8);
  b = new Float64Array(2);
  dW = new Float64Array(8);
  db = new Float64Array(2);
  #dPrivate = new Float64Array(8);
  /**
${tags.map((t) => `   * ${t}`).join('\n')}
   */
  forward(x: Float64Array, mask: Float64Array, scale = 1): Float64Array { return x; }
  backward(dy: Float64Array): Float64Array { return dy; }
  hess(x: Float64Array): number[][] { return []; }${extra}
}
`;
}

const SAMPLES = ['@backward backward', '@sample x f64[4]', '@sample mask f64[4] fixed', '@sample this.W f64[2, 4]', '@sample this.b f64[2]'];

describe('discovery: @gradientField', () => {
  it('reads the tags onto the op, in tag order', () => {
    const text = layer([...SAMPLES, '@gradientField this.W this.dW', '@gradientField this.b this.db']);
    const op = opNamed(discover(text), 'Linear.forward');
    assert.deepEqual(op.problems, []);
    assert.deepEqual(op.gradientFields, [
      { param: 'this.W', field: 'dW' },
      { param: 'this.b', field: 'db' },
    ]);
    assert.ok(op.tags.some((t) => t.tag === 'gradientField'));
    // Without the tag the op has no such field at all (the report and snippets test for it).
    assert.equal(opNamed(discover(layer(SAMPLES)), 'Linear.forward').gradientFields, undefined);
  });

  it('a misspelt tag name gets a did-you-mean', () => {
    const text = layer([...SAMPLES, '@gradientfield this.W this.dW', '@gradientFields this.b this.db']);
    const op = opNamed(discover(text), 'Linear.forward');
    expectProblem(text, op, '@gradientfield', /unknown tag @gradientfield; did you mean @gradientField\?/);
    expectProblem(text, op, '@gradientFields', /did you mean @gradientField\?/);
  });

  it('on a function, and beside only a @jacobian: at the tag, saying why', () => {
    const fn = `/**
 * @backward fb
 * @sample x f64[3]
 * @gradientField x this.dx
 */
export function f(x: Float64Array): Float64Array { return x; }
export function fb(x: Float64Array, dy: Float64Array): Float64Array { return dy; }
`;
    expectProblem(fn, opNamed(discover(fn), 'f'), '@gradientField', /@gradientField applies to methods/);
    const jac = layer(['@jacobian hess', '@sample x f64[4]', '@sample mask f64[4] fixed', '@gradientField x this.dW']);
    expectProblem(jac, opNamed(discover(jac), 'Linear.forward @jacobian'), '@gradientField', /@gradientField goes with @backward/);
  });

  it('with @backward library-gradient, or on a TensorFlow.js tensor op: at the tag', () => {
    const text = `import * as tf from '@tensorflow/tfjs';
export class Cell {
  dW = new Float64Array(3);
  /**
   * @backward library-gradient
   * @sample a f32[3]
   * @gradientField a this.dW
   */
  forward(a: tf.Tensor1D): tf.Tensor { return tf.square(a); }
}
`;
    expectProblem(text, opNamed(discover(text), 'Cell.forward'), '@gradientField', /does not apply to `@backward library-gradient`/);
    const handWritten = text.replace('@backward library-gradient', '@backward back').replace('}\n', '}\n  back(dy: tf.Tensor): tf.Tensor { return dy; }\n');
    expectProblem(handWritten, opNamed(discover(handWritten), 'Cell.forward'), '@gradientField', /does not apply to an op on TensorFlow\.js tensors/);
  });

  it('PARAM: unknown (with a suggestion and its fix), not differentiated (fixed, default, = JSON), given twice', () => {
    const text = layer([
      ...SAMPLES,
      '@sample this.k = 3',
      '@gradientField this.w this.dW',
      '@gradientField mask this.db',
      '@gradientField scale this.db',
      '@gradientField this.k this.db',
      '@gradientField this.b this.db',
      '@gradientField this.b this.dW',
    ]);
    const op = opNamed(discover(text), 'Linear.forward');
    const typo = expectProblem(text, op, 'this.w this.dW', /'this\.w' is not a differentiated parameter of Linear\.forward; did you mean 'this\.W'\?/);
    assert.deepEqual(typo.fixes, [{ kind: 'replace', text: 'this.W' }]);
    expectProblem(text, op, 'mask this.db', /'mask' is sampled `fixed`, so it is not differentiated/);
    expectProblem(text, op, 'scale this.db', /'scale' has no @sample \(its default value applies\)/);
    expectProblem(text, op, 'this.k this.db', /'this\.k' is an exact value \(`= JSON`\)/);
    expectProblem(text, op, 'this.b this.dW', /'this\.b' already has its gradient in this\.db; give each parameter one tag/);
    assert.deepEqual(op.gradientFields, [{ param: 'this.b', field: 'db' }]);
    assert.equal(op.problems.length, 5, JSON.stringify(op.problems));
  });

  it('FIELD: missing, not `this.`, #private, a sampled input, already used, followed by more', () => {
    const text = layer([
      ...SAMPLES,
      '@gradientField',
      '@gradientField x',
      '@gradientField this.W dW',
      '@gradientField this.W this.#dPrivate',
      '@gradientField this.W this.b',
      '@gradientField this.W this.dW',
      '@gradientField x this.dW',
      '@gradientField this.b this.db extra',
    ]);
    const op = opNamed(discover(text), 'Linear.forward');
    expectProblem(text, op, '@gradientField\n', /@gradientField needs a parameter and the field holding its gradient, e\.g\. `@gradientField this\.W this\.dW`/);
    expectProblem(text, op, '@gradientField x\n', /@gradientField x: expected the field holding its gradient after the parameter, e\.g\. `@gradientField x this\.dx`/);
    const bare = expectProblem(text, op, 'dW\n', /the gradient's field is written `this\.dW`, found 'dW'/);
    assert.deepEqual(bare.fixes, [{ kind: 'replace', text: 'this.dW' }]);
    expectProblem(text, op, '#dPrivate', /'this\.#dPrivate' is a private \(#\) field: the check cannot zero or read it/, 1);
    expectProblem(text, op, 'this.b\n', /'this\.b' is an input of the op \(it has a @sample\); the gradient needs a field of its own, e\.g\. `this\.dW`/);
    expectProblem(text, op, 'this.dW', /this\.dW already holds the gradient of 'this\.W'/, 1);
    expectProblem(text, op, 'extra', /unexpected 'extra' after the field/);
    assert.deepEqual(op.gradientFields, [{ param: 'this.W', field: 'dW' }]);
    assert.equal(op.problems.length, 7, JSON.stringify(op.problems));
  });

  it('with @backward and @hessian: the backward op has the fields, the Hessian keeps them for its reference only', () => {
    const text = layer(['@backward backward', '@hessian hess', '@sample x f64[4]', '@sample mask f64[4] fixed', '@gradientField x this.dW']);
    const r = discover(text);
    const back = opNamed(r, 'Linear.forward');
    assert.deepEqual(back.problems, []);
    assert.deepEqual(back.gradientFields, [{ param: 'x', field: 'dW' }]);
    const hessian = opNamed(r, 'Linear.forward @hessian');
    assert.equal(hessian.gradientFields, undefined);
    assert.deepEqual(hessian.gradient?.gradientFields, [{ param: 'x', field: 'dW' }]);
  });
});
