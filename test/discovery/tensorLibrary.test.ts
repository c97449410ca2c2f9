// Discovery of TensorFlow.js ops from source text alone: tensor parameters from their declared
// types, `tf.customGrad` consts (the save parameter left out), `@backward library-gradient`,
// the float32 rule for tensor samples, and did-you-mean for near misses of the spelling.
import assert from 'node:assert/strict';
import { TENSOR_LIBRARY_BINDING } from '../../server/src/model/types';
import { exposeCode } from '../../server/src/sandbox/exposeCode';
import { discover, expectProblem, opNamed } from './helpers';

const HEADER = `import * as tf from '@tensorflow/tfjs';\nimport { Tensor2D as Grid, customGrad, type GradSaveFunc } from '@tensorflow/tfjs';\n`;

describe('discovery: TensorFlow.js ops', () => {
  it('marks parameters declared as library tensors, and only those', () => {
    const text = `${HEADER}
/**
 * @backward library-gradient
 * @sample a f32[2, 3]
 * @sample b f32[3]
 * @sample k num fixed
 */
export function mixPanes(a: Grid, b: tf.Tensor1D, k: number): tf.Tensor { return tf.mul(tf.add(a, b), k); }
`;
    const op = opNamed(discover(text), 'mixPanes');
    assert.deepEqual(op.problems, []);
    assert.deepEqual(
      op.params.map((p) => [p.name, p.tensor === true]),
      [
        ['a', true],
        ['b', true],
        ['k', false],
      ],
    );
    assert.equal(op.backward, 'library-gradient');
    assert.equal(op.target.libraryGradient, true);
    assert.equal(op.target.backwardName, '');
    assert.equal(op.target.tensorLibrary, '@tensorflow/tfjs');
  });

  it('reads a tf.customGrad const as an op whose inputs are tensors, without the save function', () => {
    const text = `${HEADER}
/**
 * @backward library-gradient
 * @sample x f32[4]
 */
export const ventClip = tf.customGrad((x, save) => {
  (save as GradSaveFunc)([x as tf.Tensor]);
  return { value: tf.tanh(x as tf.Tensor), gradFunc: (dy: tf.Tensor) => dy };
});

/**
 * @backward library-gradient
 * @sample a f32[2]
 * @sample b f32[2]
 */
const shadeBlend = customGrad((a: tf.Tensor, b: tf.Tensor, keep: GradSaveFunc) => {
  keep([a, b]);
  return { value: tf.mul(a, b), gradFunc: (dy: tf.Tensor) => [dy, dy] };
});
`;
    const r = discover(text);
    const clip = opNamed(r, 'ventClip');
    assert.deepEqual(clip.problems, []);
    assert.deepEqual(
      clip.params.map((p) => [p.name, p.tensor]),
      [['x', true]],
    );
    const blend = opNamed(r, 'shadeBlend');
    assert.deepEqual(blend.problems, []);
    assert.deepEqual(
      blend.params.map((p) => p.name),
      ['a', 'b'],
    );
  });

  it('puts the float32 message on the @sample tag of a tensor sampled as f64 or num', () => {
    const text = `${HEADER}
/**
 * @backward library-gradient
 * @sample x f64[3, 2] in [-1, 1]
 * @sample y num[2]
 */
export function glaze(x: tf.Tensor2D, y: tf.Tensor1D): tf.Tensor { return tf.add(x, y); }
`;
    const op = opNamed(discover(text), 'glaze');
    expectProblem(text, op, '@sample x', /'x' is a TensorFlow\.js tensor, and the library computes in float32; sample it as `f32\[3, 2\]`/);
    expectProblem(text, op, '@sample y', /'y' is a TensorFlow\.js tensor.*`f32\[2\]`/);
  });

  it('suggests the library-gradient spelling for near misses, in the tag body and as a tag name', () => {
    const text = `${HEADER}
/**
 * @backward libraryGradient
 * @sample x f32[3]
 */
export function mist(x: tf.Tensor): tf.Tensor { return tf.exp(x); }

/**
 * @backward library_gradients
 * @sample x f32[3]
 */
export function fog(x: tf.Tensor): tf.Tensor { return tf.exp(x); }

/**
 * @libraryGradient
 * @backward library-gradient
 * @sample x f32[3]
 */
export function dew(x: tf.Tensor): tf.Tensor { return tf.exp(x); }
`;
    const r = discover(text);
    expectProblem(text, opNamed(r, 'mist'), '@backward libraryGradient', /did you mean `@backward library-gradient`/);
    expectProblem(text, opNamed(r, 'fog'), '@backward library_gradients', /did you mean `@backward library-gradient`/);
    expectProblem(text, opNamed(r, 'dew'), '@libraryGradient', /unknown tag @libraryGradient; the library's own gradient is asked for with `@backward library-gradient`/);
  });

  it('keeps a real function named like a near miss', () => {
    const text = `${HEADER}
export function library(x: Float64Array, dy: Float64Array): Float64Array { return dy; }
/**
 * @backward library
 * @sample x f64[3]
 */
export function plain(x: Float64Array): Float64Array { return x; }
`;
    const op = opNamed(discover(text), 'plain');
    assert.deepEqual(op.problems, []);
    assert.equal(op.target.libraryGradient, undefined);
    // Every op of a module that imports the library calls through it (tensor outputs read back).
    assert.equal(op.target.tensorLibrary, '@tensorflow/tfjs');
    assert.deepEqual(
      op.params.map((p) => p.tensor),
      [undefined],
    );
  });

  it('says when library-gradient has no library to take the gradient from', () => {
    const text = `
/**
 * @backward library-gradient
 * @sample x f64[3]
 */
export function lonely(x: Float64Array): Float64Array { return x; }
`;
    const op = opNamed(discover(text), 'lonely');
    expectProblem(text, op, '@backward library-gradient', /imports no TensorFlow\.js package/);
    assert.equal(op.target.tensorLibrary, undefined);
  });

  it('has the bundle import the library namespace the op needs, and only a TensorFlow.js package', () => {
    const code = exposeCode(['ventClip'], '@tensorflow/tfjs');
    assert.match(code, new RegExp(`import \\* as ${TENSOR_LIBRARY_BINDING} from "@tensorflow/tfjs";`));
    assert.match(code, new RegExp(`"${TENSOR_LIBRARY_BINDING}": ${TENSOR_LIBRARY_BINDING}`));
    assert.doesNotMatch(exposeCode(['f'], 'evil"; globalThis.x = 1; "'), /import/);
  });
});
