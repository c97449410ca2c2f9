// Diagnoses rather than symptoms (issue 9): which named output's term is wrong, one worst
// element for the figure and the message, and a precision hint for an f64-sampled op that
// computes in float32. Derivatives by the chain rule: d sin = cos, d Σx² = 2x.

import assert from 'node:assert/strict';
import { check, functionOp, show, spec } from './opBuilder';

describe('engine: diagnosis', () => {
  it('a multi-output op whose "total" term is wrong names that output', () => {
    // Shape: an op returning { y, total }; the backward's term for `total` misses the factor 2.
    const o = check(functionOp({
      forward: (x: Float64Array) => ({ y: x.map((v) => Math.sin(v)), total: x.reduce((a, v) => a + v * v, 0) }),
      backward: (x: Float64Array, dy: { y: Float64Array; total: number }) => x.map((v, i) => Math.cos(v) * dy.y[i] + v * dy.total),
      params: [['x', spec('f64', [6])]],
    }));
    assert.equal(o.verdict, 'mismatch', show(o));
    assert.ok(o.params[0]!.hints.some((h) => /^output 'total' accounts for the disagreement/.test(h)), show(o));
    assert.match(o.message, /output 'total' accounts for the disagreement/);
  });

  it('when both outputs\' terms are wrong, no single output is named', () => {
    const o = check(functionOp({
      forward: (x: Float64Array) => ({ y: x.map((v) => Math.sin(v)), total: x.reduce((a, v) => a + v * v, 0) }),
      backward: (x: Float64Array, dy: { y: Float64Array; total: number }) => x.map((v, i) => 1.1 * Math.cos(v) * dy.y[i] + v * dy.total),
      params: [['x', spec('f64', [6])]],
    }));
    assert.equal(o.verdict, 'mismatch', show(o));
    assert.ok(!o.params[0]!.hints.some((h) => /accounts for the disagreement/.test(h)), show(o));
  });
});
