// The forms the interface allows (docs/annotations.md): outputs that are numbers,
// typed arrays, nested number[] or objects of named outputs; gradients returned singly, as a
// list or keyed by name; `$y` and `$dy` in the backward list; methods with `this.FIELD`
// parameters and `@construct`; float32, literal, fixed and integer inputs. Correct backwards
// (derivatives by the chain rule, checked by hand) must pass; the same with a planted bug must not.

import assert from 'node:assert/strict';
import { check, functionOp, literal, methodOp, show, spec } from './opBuilder';

describe('engine: interface forms', () => {
  it('object of named outputs: $dy has the same keys', () => {
    const built = (bug: number) =>
      functionOp({
        forward: (x: Float64Array) => ({ y: x.map((v) => Math.sin(v)), total: x.reduce((a, v) => a + v * v, 0) }),
        backward: (x: Float64Array, dy: { y: Float64Array; total: number }) => x.map((v, i) => Math.cos(v) * dy.y[i] + 2 * v * dy.total * bug),
        params: [['x', spec('f64', [5])]],
      });
    assert.equal(check(built(1)).verdict, 'pass', show(check(built(1))));
    assert.equal(check(built(1.001)).verdict, 'mismatch');
  });

  it('nested number[] parameter and output (num[3, 4]); gradient returned nested or flat', () => {
    const fwd = (a: number[][]) => a.map((row) => row.map((v) => v * v * v));
    const nested = (a: number[][], dy: number[][]) => a.map((row, r) => row.map((v, c) => 3 * v * v * dy[r][c]));
    const flat = (a: number[][], dy: number[][]) => nested(a, dy).flat();
    for (const backward of [nested, flat]) {
      const o = check(functionOp({ forward: fwd, backward, params: [['a', spec('num', [3, 4])]] }));
      assert.equal(o.verdict, 'pass', show(o));
      assert.deepEqual(o.params[0].shape, [3, 4]);
      assert.equal(o.params[0].errorMap?.length, 12, 'a 2-D parameter gets an error map');
    }
  });

  it('several parameters: gradients as a list in declaration order or an object keyed by name', () => {
    const fwd = (a: Float64Array, s: number) => a.map((v) => s * Math.exp(v));
    const asList = (a: Float64Array, s: number, dy: Float64Array) => [a.map((v, i) => s * Math.exp(v) * dy[i]), a.reduce((acc, v, i) => acc + Math.exp(v) * dy[i], 0)];
    const asObject = (a: Float64Array, s: number, dy: Float64Array) => {
      const [da, ds] = asList(a, s, dy);
      return { s: ds, a: da };
    };
    for (const backward of [asList, asObject]) {
      const o = check(
        functionOp({
          forward: fwd,
          backward,
          params: [
            ['a', spec('f64', [6])],
            ['s', spec('num', [], [0.5, 2])],
          ],
        }),
      );
      assert.equal(o.verdict, 'pass', show(o));
      assert.deepEqual(
        o.params.map((p) => p.name),
        ['a', 's'],
      );
    }
  });

  it('$y in the backward list: sigmoid backward from its output', () => {
    const sigmoid = (x: Float64Array) => x.map((v) => 1 / (1 + Math.exp(-v)));
    const o = check(
      functionOp({
        forward: sigmoid,
        backward: (y: Float64Array, dy: Float64Array) => y.map((v, i) => v * (1 - v) * dy[i]),
        params: [['x', spec('f64', [8], [-4, 4])]],
        backwardArgs: ['$y', '$dy'],
      }),
    );
    assert.equal(o.verdict, 'pass', show(o));
  });

  it('no $dy: a scalar loss whose backward returns the plain gradient', () => {
    const o = check(
      functionOp({
        forward: (p: Float64Array, t: Float64Array) => p.reduce((a, v, i) => a + (v - t[i]) ** 2, 0) / p.length,
        backward: (p: Float64Array, t: Float64Array) => p.map((v, i) => (2 * (v - t[i])) / p.length),
        params: [
          ['p', spec('f64', [10])],
          ['t', spec('f64', [10], [-1, 1], { fixed: true })],
        ],
        backwardArgs: ['p', 't'],
      }),
    );
    assert.equal(o.verdict, 'pass', show(o));
    assert.equal(o.params.length, 1, 'the fixed target is not differentiated');
    assert.equal(o.calls.backward, 1, 'one backward call: the upstream gradient is 1');
  });

  it('literal (= JSON) and integer inputs are passed through, not differentiated', () => {
    const o = check(
      functionOp({
        forward: (x: Float64Array, opts: { scale: number }, k: number) => x.map((v) => opts.scale * v ** k),
        backward: (x: Float64Array, opts: { scale: number }, k: number, dy: Float64Array) => x.map((v, i) => opts.scale * k * v ** (k - 1) * dy[i]),
        params: [
          ['x', spec('f64', [6], [0.5, 2])],
          ['opts', literal({ scale: 1.5 })],
          ['k', spec('int', [], [2, 4])],
        ],
      }),
    );
    assert.equal(o.verdict, 'pass', show(o));
    assert.deepEqual(
      o.params.map((p) => p.name),
      ['x'],
    );
    assert.deepEqual(o.inputs?.args[1], { scale: 1.5 });
  });

  it('float32 op: checked against float32 roundoff; a 1e-2 bug is still caught', () => {
    const fwd = (x: Float32Array) => Float32Array.from(x, (v) => Math.tanh(v));
    const ok = check(
      functionOp({
        forward: fwd,
        backward: (x: Float32Array, dy: Float32Array) => Float32Array.from(x, (v, i) => (1 - Math.tanh(v) ** 2) * dy[i]),
        params: [['x', spec('f32', [32], [-2, 2])]],
      }),
    );
    assert.equal(ok.verdict, 'pass', show(ok));
    assert.equal(ok.params[0].dtype, 'f32');
    const bad = check(
      functionOp({
        forward: fwd,
        backward: (x: Float32Array, dy: Float32Array) => Float32Array.from(x, (v, i) => 1.01 * (1 - Math.tanh(v) ** 2) * dy[i]),
        params: [['x', spec('f32', [32], [-2, 2])]],
      }),
    );
    assert.equal(bad.verdict, 'mismatch', show(bad));
  });

  it('method op: this.FIELD parameters set on the instance, backward reads state cached by the forward', () => {
    class Layer {
      weight = new Float64Array(0);
      bias = 0;
      private lastX: Float64Array | null = null;
      apply(x: Float64Array): Float64Array {
        this.lastX = x.slice();
        return x.map((v, i) => Math.tanh(this.weight[i] * v + this.bias));
      }
      grad(dy: Float64Array): { x: Float64Array; weight: Float64Array; bias: number } {
        const x = this.lastX!;
        const d = x.map((v, i) => (1 - Math.tanh(this.weight[i] * v + this.bias) ** 2) * dy[i]);
        return { x: d.map((v, i) => v * this.weight[i]), weight: d.map((v, i) => v * x[i]), bias: d.reduce((a, b) => a + b, 0) };
      }
    }
    const built = methodOp({
      cls: Layer,
      forwardName: 'apply',
      backwardName: 'grad',
      params: [
        ['x', spec('f64', [6])],
        ['this.weight', spec('f64', [6])],
        ['this.bias', spec('num', [], [-0.5, 0.5])],
      ],
    });
    const o = check(built);
    assert.equal(o.verdict, 'pass', show(o));
    assert.deepEqual(
      o.params.map((p) => p.name),
      ['x', 'this.weight', 'this.bias'],
    );
    assert.ok(o.inputs && 'weight' in o.inputs.fields, 'fields are in the recorded inputs');
  });

  it('method op whose backward reads inputs cached by the forward, with enough elements to be probed for structure', () => {
    // The structure probes run the forward at moved points; the backward must still see the cache of the sample point.
    class Smoother {
      alpha = 0.5;
      private inputs = new Float64Array(0);
      private states = new Float64Array(0);
      forward(x: Float64Array): Float64Array {
        this.inputs = Float64Array.from(x);
        this.states = new Float64Array(x.length);
        let s = 0;
        for (let t = 0; t < x.length; t++) this.states[t] = s = this.alpha * s + (1 - this.alpha) * x[t];
        return Float64Array.from(this.states);
      }
      backward(dy: Float64Array): { x: Float64Array; alpha: number } {
        const dx = new Float64Array(dy.length);
        let dAlpha = 0;
        let carried = 0;
        for (let t = dy.length - 1; t >= 0; t--) {
          const ds = dy[t] + carried;
          dx[t] = ds * (1 - this.alpha);
          dAlpha += ds * ((t > 0 ? this.states[t - 1] : 0) - this.inputs[t]);
          carried = ds * this.alpha;
        }
        return { x: dx, alpha: dAlpha };
      }
    }
    const o = check(
      methodOp({
        cls: Smoother,
        forwardName: 'forward',
        backwardName: 'backward',
        params: [
          ['x', spec('f64', [24], [10, 30])],
          ['this.alpha', spec('num', [], [0.2, 0.8])],
        ],
      }),
    );
    assert.equal(o.verdict, 'pass', show(o));
  });

  it('method op with @construct and a $dy-only backward returning a list', () => {
    class Scaler {
      constructor(readonly k: number) {}
      run(x: Float64Array) {
        return x.map((v) => this.k * v * v);
      }
      back(x: Float64Array, dy: Float64Array) {
        return [x.map((v, i) => 2 * this.k * v * dy[i])];
      }
    }
    const built = methodOp({
      cls: Scaler as unknown as new () => object,
      forwardName: 'run',
      backwardName: 'back',
      params: [['x', spec('f64', [4])]],
      backwardArgs: ['x', '$dy'],
      construct: () => new Scaler(3),
    });
    const o = check(built);
    assert.equal(o.verdict, 'pass', show(o));
  });

  it('a constructor that throws is an error naming it', () => {
    class Broken {
      constructor() {
        throw new Error('no weights file');
      }
      run(x: Float64Array) {
        return x;
      }
      back(dy: Float64Array) {
        return dy;
      }
    }
    const o = check(methodOp({ cls: Broken, forwardName: 'run', backwardName: 'back', params: [['x', spec('f64', [4])]] }));
    assert.equal(o.verdict, 'error', show(o));
    assert.match(o.message, /new Layer\(\) threw no weights file/);
  });

  it('@tolerance overrides the configured tolerance', () => {
    const built = (tolerance?: number) =>
      functionOp({
        forward: (x: Float64Array) => x.map((v) => v * v),
        backward: (x: Float64Array, dy: Float64Array) => x.map((v, i) => 2 * v * dy[i] * (1 + 1e-5)),
        params: [['x', spec('f64', [4])]],
        tolerance,
      });
    assert.equal(check(built()).verdict, 'mismatch');
    assert.equal(check(built(1e-4)).verdict, 'pass');
  });
});
