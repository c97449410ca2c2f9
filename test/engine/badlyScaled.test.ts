// Correct but badly scaled ops (values near 1e30, gradients near 1e-12, outputs of very
// different sizes) must pass: the engine's steps scale with |x| (Nocedal & Wright, 2nd ed.,
// §8.1), its differences are taken per output before projecting, and its comparison is
// relative. The contrast: the loop a practitioner writes by hand (fixed step 1e-5, relative
// tolerance 1e-5, sum of the outputs, no refinement — common practice, written here) raises
// false alarms on every one of them.

import assert from 'node:assert/strict';
import { check, functionOp, show, spec } from './opBuilder';
import type { SampleSpec } from '../../server/src/model/types';

type Forward = (x: Float64Array) => Float64Array;
type Backward = (x: Float64Array, dy: Float64Array) => Float64Array;

interface ScaledOp {
  name: string;
  forward: Forward;
  backward: Backward;
  sample: SampleSpec;
}

const map = (x: Float64Array, f: (v: number, i: number) => number) => {
  const y = new Float64Array(x.length);
  for (let i = 0; i < x.length; i++) y[i] = f(x[i], i);
  return y;
};

const ops: ScaledOp[] = [
  {
    // Values 1e27..1e30, gradients 3x² ≈ 3e18..3e20.
    name: 'cube of inputs near 1e9..1e10 (values near 1e30)',
    forward: (x) => map(x, (v) => v * v * v),
    backward: (x, dy) => map(x, (v, i) => 3 * v * v * dy[i]),
    sample: spec('f64', [12], [1e9, 1e10]),
  },
  {
    // Gradients 1/x ≈ 1e-13..1e-12.
    name: 'log of inputs near 1e12..1e13 (gradients near 1e-12)',
    forward: (x) => map(x, (v) => Math.log(v)),
    backward: (x, dy) => map(x, (v, i) => dy[i] / v),
    sample: spec('f64', [12], [1e12, 1e13]),
  },
  {
    // Outputs alternate between ~1e30 and ~1e-12 in size: one huge output drowns a tiny one in any sum.
    name: 'outputs of mixed size (1e30·sin and 1e-12·x²)',
    forward: (x) => map(x, (v, i) => (i % 2 === 0 ? 1e30 * Math.sin(v) : 1e-12 * v * v)),
    backward: (x, dy) => map(x, (v, i) => (i % 2 === 0 ? 1e30 * Math.cos(v) : 2e-12 * v) * dy[i]),
    sample: spec('f64', [12], [-2, 2]),
  },
];

/** The hand-written loop: fixed step, scalar projection (sum of outputs), one relative test. */
function handWrittenLoop(forward: Forward, backward: Backward, x: Float64Array): { falseAlarms: number } {
  const STEP = 1e-5; // common practice value
  const TOL = 1e-5; // common practice value
  const sum = (y: Float64Array) => y.reduce((a, b) => a + b, 0);
  const ones = new Float64Array(forward(x).length).fill(1);
  const g = backward(x, ones);
  let falseAlarms = 0;
  for (let i = 0; i < x.length; i++) {
    const xi = x[i];
    x[i] = xi + STEP;
    const sp = sum(forward(x));
    x[i] = xi - STEP;
    const sm = sum(forward(x));
    x[i] = xi;
    const n = (sp - sm) / (2 * STEP);
    const rel = Math.abs(g[i] - n) / Math.max(Math.abs(g[i]), Math.abs(n), 1e-300);
    if (rel > TOL) falseAlarms++;
  }
  return { falseAlarms };
}

describe('engine: badly scaled correct ops pass (and a hand-written loop false-alarms on them)', () => {
  for (const op of ops) {
    it(`${op.name}: engine passes`, () => {
      const o = check(functionOp({ forward: op.forward, backward: op.backward, params: [['x', op.sample]] }));
      assert.equal(o.verdict, 'pass', show(o));
      assert.ok(o.params[0].maxRelError < 1e-6, show(o));
    });

    it(`${op.name}: the hand-written loop raises false alarms on the same inputs (contrast)`, () => {
      const o = check(functionOp({ forward: op.forward, backward: op.backward, params: [['x', op.sample]] }));
      const data = (o.inputs!.args[0] as { data: number[] }).data;
      const { falseAlarms } = handWrittenLoop(op.forward, op.backward, Float64Array.from(data));
      assert.ok(falseAlarms >= 3, `hand-written loop false alarms: ${falseAlarms} of ${data.length}`);
    });

    it(`${op.name}: a 1e-4 relative bug is still a mismatch`, () => {
      const buggy: Backward = (x, dy) => op.backward(x, dy).map((g) => g * (1 + 1e-4));
      const o = check(functionOp({ forward: op.forward, backward: buggy, params: [['x', op.sample]] }));
      assert.equal(o.verdict, 'mismatch', show(o));
    });
  }

  it('an op whose outputs are too large to show the change at all (1e30 + x) is inconclusive, neither pass nor mismatch', () => {
    // Float64 spacing at 1e30 is about 1.4e14 (IEEE 754-2019 binary64): no step that keeps x in
    // [-1, 1] moves the output, so the gradient 1 can be neither confirmed nor refuted.
    const o = check(functionOp({ forward: (x: number) => 1e30 + x, backward: () => 1, params: [['x', spec('num', [], [-1, 1])]], backwardArgs: ['x'] }));
    assert.equal(o.verdict, 'inconclusive', show(o));
    assert.match(o.message, /outputs are too large to show a change/);
  });

  it('a function that changes on a scale of 1e-3 (exp(1000·m), m in ±0.01) passes, and a 1e-4 bug in it is a mismatch', () => {
    // Ridders' initial step must be one over which the function changes substantially but not
    // wildly (Numerical Recipes 3rd ed. §5.7); 0.05·max(1, |m|) is 50 e-foldings here.
    const steep = (bug: number) =>
      functionOp({
        forward: (m: Float64Array) => m.map((v) => Math.exp(1000 * v)),
        backward: (m: Float64Array, dy: Float64Array) => m.map((v, i) => bug * 1000 * Math.exp(1000 * v) * dy[i]),
        params: [['m', spec('f64', [8], [-0.01, 0.01])]],
      });
    const ok = check(steep(1));
    assert.equal(ok.verdict, 'pass', show(ok));
    const bad = check(steep(1 + 1e-4));
    assert.equal(bad.verdict, 'mismatch', show(bad));
  });
});
