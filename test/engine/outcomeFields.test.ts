// Facts the engine hands on as fields, not words: the tolerance it judged each parameter with
// (the op's @tolerance, else float32's setting when a parameter or the output is float32, else
// float64's) and why an op could not be checked (`failure`, set exactly on verdict `error`).

import assert from 'node:assert/strict';
import { runCheck } from '../../server/src/engine/check';
import { DEFAULT_SETTINGS } from '../../server/src/engine/settings';
import { check, clock, functionOp, show, spec } from './opBuilder';

const square = (x: Float64Array) => x.map((v) => v * v);
const squareBackward = (x: Float64Array, dy: Float64Array) => x.map((v, i) => 2 * v * dy[i]);
// d/dx x² = 2x (power rule), so this backward is correct; the wrong one is off by a factor of 2.
const wrongBackward = (x: Float64Array, dy: Float64Array) => x.map((v, i) => v * dy[i]);

describe('engine: the applied tolerance is a field of every parameter result', () => {
  it('float64 parameters are judged with the float64 setting', () => {
    const o = check(functionOp({ forward: square, backward: squareBackward, params: [['x', spec('f64', [4])]] }));
    assert.equal(o.verdict, 'pass', show(o));
    assert.deepEqual(
      o.params.map((p) => p.tolerance),
      [DEFAULT_SETTINGS.toleranceF64],
    );
  });

  it('a float32 parameter makes the op float32: every parameter gets the float32 setting', () => {
    const mixed = (x: Float32Array, w: Float64Array) => Float64Array.from(x, (v, i) => v * w[i]);
    const mixedBackward = (x: Float32Array, w: Float64Array, dy: Float64Array) => [Float32Array.from(w, (v, i) => v * dy[i]), Float64Array.from(x, (v, i) => v * dy[i])];
    const o = check(
      functionOp({
        forward: mixed,
        backward: mixedBackward,
        params: [
          ['x', spec('f32', [3])],
          ['w', spec('f64', [3])],
        ],
      }),
    );
    assert.deepEqual(
      o.params.map((p) => p.tolerance),
      [DEFAULT_SETTINGS.toleranceF32, DEFAULT_SETTINGS.toleranceF32],
      show(o),
    );
  });

  it('float64 inputs whose forward returns float32 values are judged with float32 tolerance too', () => {
    const rounded = (x: Float64Array) => Float32Array.from(x, (v) => v * v);
    const roundedBackward = (x: Float64Array, dy: Float32Array) => Float64Array.from(x, (v, i) => 2 * v * dy[i]);
    const o = check(functionOp({ forward: rounded, backward: roundedBackward, params: [['x', spec('f64', [3])]] }));
    assert.deepEqual(
      o.params.map((p) => p.tolerance),
      [DEFAULT_SETTINGS.toleranceF32],
      show(o),
    );
  });

  it("the op's @tolerance wins, on a mismatch too", () => {
    const o = check(functionOp({ forward: square, backward: wrongBackward, params: [['x', spec('f64', [4])]], tolerance: 1e-4 }));
    assert.equal(o.verdict, 'mismatch', show(o));
    assert.deepEqual(
      o.params.map((p) => p.tolerance),
      [1e-4],
    );
  });
});

describe('engine: why an op could not be checked is a field', () => {
  it('user code that threw is `threw`', () => {
    const o = check(
      functionOp({
        forward: () => {
          throw new Error('boom');
        },
        backward: squareBackward,
        params: [['x', spec('f64', [4])]],
      }),
    );
    assert.equal(o.verdict, 'error');
    assert.equal(o.failure, 'threw', show(o));
  });

  it('an op that cannot be checked as written is `refused`', () => {
    const zeroing = (x: Float64Array) => {
      x[1] = 0;
      return square(x);
    };
    const o = check(functionOp({ forward: zeroing, backward: squareBackward, params: [['x', spec('f64', [4])]] }));
    assert.equal(o.verdict, 'error');
    assert.equal(o.failure, 'refused', show(o));
  });

  it('an op with annotation problems is `annotation`, without running', () => {
    const { exposed, op } = functionOp({ forward: square, backward: squareBackward, params: [['x', spec('f64', [4])]] });
    const o = runCheck(exposed, { op: { ...op, problems: [{ line: 1, column: 1, message: 'unknown tag @sampel' }] }, settings: DEFAULT_SETTINGS }, clock);
    assert.deepEqual([o.verdict, o.failure, o.calls.forward], ['error', 'annotation', 0]);
  });

  it('no failure on a pass or a mismatch', () => {
    const pass = check(functionOp({ forward: square, backward: squareBackward, params: [['x', spec('f64', [4])]] }));
    const mismatch = check(functionOp({ forward: square, backward: wrongBackward, params: [['x', spec('f64', [4])]] }));
    assert.deepEqual([pass.verdict, pass.failure, mismatch.verdict, mismatch.failure], ['pass', undefined, 'mismatch', undefined]);
  });
});
