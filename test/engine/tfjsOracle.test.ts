// @tensorflow/tfjs (npm registry) with its CPU backend as the backward of float32 ops whose
// forwards are written here by hand: matmul, softmax, layer norm and a 1-D convolution. tfjs
// computes in float32, so the ops take Float32Array inputs and are checked with the float32
// tolerance; its autodiff gradients of our forwards must pass.

import assert from 'node:assert/strict';
import { check, functionOp, show, spec } from './opBuilder';

// eslint-disable-next-line @typescript-eslint/no-require-imports
const tf = require('@tensorflow/tfjs') as typeof import('@tensorflow/tfjs');

type Tensor = import('@tensorflow/tfjs').Tensor;

/** Vector-Jacobian product of fn at xs with upstream dy, by tfjs autodiff; returns Float32Arrays. */
function tfVjp(fn: (...xs: Tensor[]) => Tensor, xs: { data: Float32Array; shape: number[] }[], dy: Float32Array, yShape: number[]): Float32Array[] {
  return tf.tidy(() => {
    const inputs = xs.map((x) => tf.tensor(x.data, x.shape));
    const upstream = tf.tensor(dy, yShape);
    const grads = tf.grads((...ts: Tensor[]) => tf.sum(tf.mul(fn(...ts), upstream)))(inputs);
    return grads.map((g) => g.dataSync() as Float32Array);
  });
}

describe('engine: tfjs (CPU backend) gradients as backwards of float32 ops', function () {
  this.timeout(120000);
  before(async () => {
    await tf.setBackend('cpu');
    assert.equal(tf.getBackend(), 'cpu');
  });

  it('matmul C = A·B (3×4 by 4×5)', () => {
    const [n, k, m] = [3, 4, 5];
    const o = check(
      functionOp({
        forward: (A: Float32Array, B: Float32Array) => {
          const C = new Float32Array(n * m);
          for (let i = 0; i < n; i++)
            for (let j = 0; j < m; j++) {
              let s = 0;
              for (let t = 0; t < k; t++) s += A[i * k + t] * B[t * m + j];
              C[i * m + j] = s;
            }
          return C;
        },
        backward: (A: Float32Array, B: Float32Array, dy: Float32Array) =>
          tfVjp(
            (a, b) => tf.matMul(a, b),
            [
              { data: A, shape: [n, k] },
              { data: B, shape: [k, m] },
            ],
            dy,
            [n, m],
          ),
        params: [
          ['A', spec('f32', [n, k])],
          ['B', spec('f32', [k, m])],
        ],
      }),
    );
    assert.equal(o.verdict, 'pass', show(o));
    assert.ok(o.params.every((p) => p.dtype === 'f32'));
  });

  it('softmax over rows (4×6)', () => {
    const [r, c] = [4, 6];
    const o = check(
      functionOp({
        forward: (x: Float32Array) => {
          const y = new Float32Array(r * c);
          for (let i = 0; i < r; i++) {
            let mx = -Infinity;
            for (let j = 0; j < c; j++) mx = Math.max(mx, x[i * c + j]);
            let z = 0;
            for (let j = 0; j < c; j++) z += Math.exp(x[i * c + j] - mx);
            for (let j = 0; j < c; j++) y[i * c + j] = Math.exp(x[i * c + j] - mx) / z;
          }
          return y;
        },
        backward: (x: Float32Array, dy: Float32Array) => tfVjp((t) => tf.softmax(t), [{ data: x, shape: [r, c] }], dy, [r, c])[0],
        params: [['x', spec('f32', [r, c], [-3, 3])]],
      }),
    );
    assert.equal(o.verdict, 'pass', show(o));
  });

  it('layer norm over rows with gain and bias (4×8, eps 1e-5)', () => {
    const [r, c] = [4, 8];
    const eps = 1e-5;
    const o = check(
      functionOp({
        forward: (x: Float32Array, gamma: Float32Array, beta: Float32Array) => {
          const y = new Float32Array(r * c);
          for (let i = 0; i < r; i++) {
            let mean = 0;
            for (let j = 0; j < c; j++) mean += x[i * c + j] / c;
            let v = 0;
            for (let j = 0; j < c; j++) v += (x[i * c + j] - mean) ** 2 / c;
            for (let j = 0; j < c; j++) y[i * c + j] = ((x[i * c + j] - mean) / Math.sqrt(v + eps)) * gamma[j] + beta[j];
          }
          return y;
        },
        backward: (x: Float32Array, gamma: Float32Array, beta: Float32Array, dy: Float32Array) =>
          tfVjp(
            (t, g, b) => {
              const { mean, variance } = tf.moments(t, 1, true);
              return tf.add(tf.mul(tf.div(tf.sub(t, mean), tf.sqrt(tf.add(variance, eps))), g), b);
            },
            [
              { data: x, shape: [r, c] },
              { data: gamma, shape: [c] },
              { data: beta, shape: [c] },
            ],
            dy,
            [r, c],
          ),
        params: [
          ['x', spec('f32', [r, c], [-2, 2])],
          ['gamma', spec('f32', [c], [0.5, 1.5])],
          ['beta', spec('f32', [c])],
        ],
      }),
    );
    assert.equal(o.verdict, 'pass', show(o));
  });

  it('1-D convolution, valid padding (length 16, 2 in / 3 out channels, width 3)', () => {
    const [len, cin, cout, w] = [16, 2, 3, 3];
    const lout = len - w + 1;
    const o = check(
      functionOp({
        forward: (x: Float32Array, f: Float32Array) => {
          const y = new Float32Array(lout * cout);
          for (let p = 0; p < lout; p++)
            for (let o2 = 0; o2 < cout; o2++) {
              let s = 0;
              for (let t = 0; t < w; t++) for (let i = 0; i < cin; i++) s += x[(p + t) * cin + i] * f[(t * cin + i) * cout + o2];
              y[p * cout + o2] = s;
            }
          return y;
        },
        backward: (x: Float32Array, f: Float32Array, dy: Float32Array) =>
          tfVjp(
            (t, k) => tf.conv1d(t as import('@tensorflow/tfjs').Tensor3D, k as import('@tensorflow/tfjs').Tensor3D, 1, 'valid'),
            [
              { data: x, shape: [1, len, cin] },
              { data: f, shape: [w, cin, cout] },
            ],
            dy,
            [1, lout, cout],
          ),
        params: [
          ['x', spec('f32', [len * cin])],
          ['f', spec('f32', [w * cin * cout])],
        ],
      }),
    );
    assert.equal(o.verdict, 'pass', show(o));
  });

  it('contrast: the tfjs gradient of sigmoid used as the backward of tanh is a mismatch', () => {
    const n = 8;
    const o = check(
      functionOp({
        forward: (x: Float32Array) => Float32Array.from(x, (v) => Math.tanh(v)),
        backward: (x: Float32Array, dy: Float32Array) => tfVjp((t) => tf.sigmoid(t), [{ data: x, shape: [n] }], dy, [n])[0],
        params: [['x', spec('f32', [n])]],
      }),
    );
    assert.equal(o.verdict, 'mismatch', show(o));
  });
});
