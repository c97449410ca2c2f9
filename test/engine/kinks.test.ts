// Non-differentiable points: relu, abs, max and a hinge evaluated exactly at (or within a step
// of) their kinks, with backwards that return a valid subgradient. The engine may call these
// inconclusive or pass, never mismatch (a kink is not a wrong gradient); and a real bug next to
// a kink is still found.

import assert from 'node:assert/strict';
import { check, functionOp, show, spec } from './opBuilder';

const relu = (x: Float64Array) => x.map((v) => Math.max(0, v));
const reluBackward = (x: Float64Array, dy: Float64Array) => x.map((v, i) => (v > 0 ? dy[i] : 0));

describe('engine: kinks are never mismatches', () => {
  it('relu with every element exactly on the kink (range [0, 0]) is inconclusive and names the point', () => {
    const o = check(functionOp({ forward: relu, backward: reluBackward, params: [['x', spec('f64', [8], [0, 0])]] }));
    assert.equal(o.verdict, 'inconclusive', show(o));
    assert.match(o.message, /non-differentiable point near x\[\d\] = 0/);
    // The last draw's figures stay in the outcome for the report.
    assert.equal(o.params.length, 1);
    assert.equal(o.params[0].verdict, 'inconclusive');
    assert.ok(o.inputs, 'the sample that met the kink is recorded');
  });

  it('relu from a @samples factory with exact zeros among other values is never a mismatch', () => {
    const o = check(
      functionOp({
        forward: relu,
        backward: reluBackward,
        params: [['x', undefined]],
        samples: (random) => [Float64Array.from({ length: 16 }, (_, i) => (i % 4 === 0 ? 0 : 2 * random() - 1))],
      }),
    );
    assert.notEqual(o.verdict, 'mismatch', show(o));
    assert.notEqual(o.verdict, 'error', show(o));
  });

  it('abs at 0 with subgradient 0 (sign(0)) agrees with the symmetric difference: pass, not mismatch', () => {
    const o = check(
      functionOp({
        forward: (x: number) => Math.abs(x),
        backward: (x: number) => Math.sign(x),
        params: [['x', spec('num', [], [0, 0])]],
        backwardArgs: ['x'],
      }),
    );
    assert.notEqual(o.verdict, 'mismatch', show(o));
  });

  it('abs at 0 with subgradient 1 disagrees with the symmetric difference (0) but is inconclusive, not mismatch', () => {
    const o = check(
      functionOp({
        forward: (x: number) => Math.abs(x),
        backward: (x: number) => (x >= 0 ? 1 : -1),
        params: [['x', spec('num', [], [0, 0])]],
        backwardArgs: ['x'],
      }),
    );
    assert.equal(o.verdict, 'inconclusive', show(o));
    assert.match(o.message, /non-differentiable point near x = 0/);
  });

  it('max(a, b) at a tie with the gradient sent to a is never a mismatch', () => {
    const o = check(
      functionOp({
        forward: (a: number, b: number) => Math.max(a, b),
        backward: (a: number, b: number) => (a >= b ? [1, 0] : [0, 1]),
        params: [
          ['a', undefined],
          ['b', undefined],
        ],
        samples: () => [0.25, 0.25],
        backwardArgs: ['a', 'b'],
      }),
    );
    assert.notEqual(o.verdict, 'mismatch', show(o));
    assert.notEqual(o.verdict, 'error', show(o));
  });

  it('a kink within one central step of the sample point (x = 1e-9) is never a mismatch', () => {
    const o = check(
      functionOp({
        forward: relu,
        backward: reluBackward,
        params: [['x', undefined]],
        samples: () => [Float64Array.from([0.3, 1e-9, -0.4, -2e-9])],
      }),
    );
    assert.notEqual(o.verdict, 'mismatch', show(o));
  });

  it('a hinge loss summed over samples with margins exactly at 1 is never a mismatch', () => {
    // loss = Σ max(0, 1 − t_i s_i); t = ±1 labels (fixed), s scores; s_i t_i = 1 sits on the kink.
    const o = check(
      functionOp({
        forward: (s: Float64Array, t: Float64Array) => s.reduce((acc, v, i) => acc + Math.max(0, 1 - t[i] * v), 0),
        backward: (s: Float64Array, t: Float64Array) => s.map((v, i) => (1 - t[i] * v > 0 ? -t[i] : 0)),
        params: [
          ['s', undefined],
          ['t', undefined],
        ],
        samples: () => [Float64Array.from([1, -1, 0.5, 2]), Float64Array.from([1, -1, 1, -1])],
        fixed: ['t'],
        backwardArgs: ['s', 't'],
      }),
    );
    assert.notEqual(o.verdict, 'mismatch', show(o));
    assert.notEqual(o.verdict, 'error', show(o));
  });

  it('a kink met once is redrawn with a new substream and the redraw is reported', () => {
    let calls = 0;
    const o = check(
      functionOp({
        forward: relu,
        backward: reluBackward,
        params: [['x', undefined]],
        samples: (random) => {
          calls++;
          // First draw puts x[2] on the kink; redraws are ordinary.
          return [Float64Array.from({ length: 5 }, (_, i) => (calls === 1 && i === 2 ? 0 : 0.1 + random()))];
        },
      }),
    );
    assert.equal(o.verdict, 'pass', show(o));
    assert.equal(calls, 2);
    assert.match(o.message, /redrawn 1× after a non-differentiable point near x\[2\] = 0/);
  });

  it('a real bug away from the kinks is still a mismatch when some elements sit on kinks', () => {
    const o = check(
      functionOp({
        forward: relu,
        // Bug: doubles the gradient where x > 0.
        backward: (x: Float64Array, dy: Float64Array) => x.map((v, i) => (v > 0 ? 2 * dy[i] : 0)),
        params: [['x', undefined]],
        samples: (random) => [Float64Array.from({ length: 16 }, (_, i) => (i % 4 === 0 ? 0 : 2 * random() - 1))],
      }),
    );
    assert.equal(o.verdict, 'mismatch', show(o));
  });

  it('relu on random inputs without avoid points passes (no sample lands within a step of 0)', () => {
    const o = check(functionOp({ forward: relu, backward: reluBackward, params: [['x', spec('f64', [64])]] }));
    assert.equal(o.verdict, 'pass', show(o));
  });
});
