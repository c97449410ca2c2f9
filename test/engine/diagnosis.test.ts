// Diagnoses rather than symptoms (docs/report-format.md, `worst` and `hints`): which named output's term is wrong, one worst
// element for the figure and the message, and a precision hint for an f64-sampled op that
// computes in float32. Derivatives by the chain rule: d sin = cos, d Σx² = 2x.

import assert from 'node:assert/strict';
import { check, functionOp, methodOp, show, spec } from './opBuilder';

describe('engine: diagnosis', () => {
  it('a multi-output op whose "total" term is wrong names that output', () => {
    // Shape: an op returning { y, total }; the backward's term for `total` misses the factor 2.
    const o = check(
      functionOp({
        forward: (x: Float64Array) => ({ y: x.map((v) => Math.sin(v)), total: x.reduce((a, v) => a + v * v, 0) }),
        backward: (x: Float64Array, dy: { y: Float64Array; total: number }) => x.map((v, i) => Math.cos(v) * dy.y[i] + v * dy.total),
        params: [['x', spec('f64', [6])]],
      }),
    );
    assert.equal(o.verdict, 'mismatch', show(o));
    assert.ok(
      o.params[0]!.hints.some((h) => /^output 'total' accounts for the disagreement/.test(h)),
      show(o),
    );
    assert.match(o.message, /output 'total' accounts for the disagreement/);
  });

  it("when both outputs' terms are wrong, no single output is named", () => {
    const o = check(
      functionOp({
        forward: (x: Float64Array) => ({ y: x.map((v) => Math.sin(v)), total: x.reduce((a, v) => a + v * v, 0) }),
        backward: (x: Float64Array, dy: { y: Float64Array; total: number }) => x.map((v, i) => 1.1 * Math.cos(v) * dy.y[i] + v * dy.total),
        params: [['x', spec('f64', [6])]],
      }),
    );
    assert.equal(o.verdict, 'mismatch', show(o));
    assert.ok(!o.params[0]!.hints.some((h) => /accounts for the disagreement/.test(h)), show(o));
  });
});

describe('engine: diagnosis of precision and the worst element', () => {
  it('an f64-sampled op that computes in float32 inside gets a hint naming the precision', () => {
    // Shape: a forward that goes through Float32Array (as a tensor library does) but is sampled f64.
    const o = check(
      functionOp({
        forward: (x: Float64Array) => Float64Array.from(Float32Array.from(x, (v) => Math.exp(v) * 1.7)),
        backward: (x: Float64Array, dy: Float64Array) => x.map((v, i) => Math.exp(v) * 1.7 * dy[i]),
        params: [['x', spec('f64', [16])]],
      }),
    );
    assert.notEqual(o.verdict, 'pass', show(o));
    assert.ok(
      o.hints.some((h) => /every output value is a float32 number/.test(h) && /f32/.test(h)),
      show(o),
    );
  });

  it('a float64 op with a mismatch gets no precision hint', () => {
    const o = check(
      functionOp({
        forward: (x: Float64Array) => x.map((v) => Math.exp(v)),
        backward: (x: Float64Array, dy: Float64Array) => x.map((v, i) => 1.01 * Math.exp(v) * dy[i]),
        params: [['x', spec('f64', [16])]],
      }),
    );
    assert.equal(o.verdict, 'mismatch');
    assert.ok(!o.hints.some((h) => /float32/.test(h)), show(o));
  });

  it('the worst element is the largest confirmed mismatch, and the message names it with its own figure', () => {
    // Two wrong elements, 2 % and 30 % off: the worst is the 30 % one, in the figure and the message.
    const o = check(
      functionOp({
        forward: (x: Float64Array) => x.map((v) => v * v * v),
        backward: (x: Float64Array, dy: Float64Array) => x.map((v, i) => 3 * v * v * dy[i] * (i === 2 ? 1.02 : i === 5 ? 1.3 : 1)),
        params: [['x', spec('f64', [8], [0.5, 1.5])]],
        backwardArgs: ['x', '$dy'],
      }),
    );
    assert.equal(o.verdict, 'mismatch', show(o));
    const p = o.params[0]!;
    assert.deepEqual(p.worst?.index, [5]);
    const own = p.worst!.relError!;
    assert.ok(own > 0.2 && own <= p.maxRelError, show(o));
    assert.match(o.message, /disagrees at x\[5\]: .*\(relative error 0\.2\d*\)/);
  });
});

describe('engine: diagnosis of a layer with several outputs', () => {
  it('naming the wrong output of a method op runs its backward on the state of the sample point', () => {
    // Shape: a layer caching its input, returning { y, energy }; the energy term misses a factor 2.
    class TwoHeads {
      input = new Float64Array(4);
      forward(x: Float64Array): { y: Float64Array; energy: number } {
        this.input = Float64Array.from(x);
        return { y: x.map((v) => Math.tanh(v)), energy: x.reduce((a, v) => a + v * v, 0) };
      }
      backward(dy: { y: Float64Array; energy: number }): Float64Array {
        return this.input.map((v, i) => (1 - Math.tanh(v) ** 2) * dy.y[i] + v * dy.energy);
      }
    }
    const o = check(methodOp({ cls: TwoHeads, forwardName: 'forward', backwardName: 'backward', params: [['x', spec('f64', [4])]] }));
    assert.equal(o.verdict, 'mismatch', show(o));
    assert.ok(
      o.params[0]!.hints.some((h) => /^output 'energy' accounts for the disagreement/.test(h)),
      show(o),
    );
  });
});
