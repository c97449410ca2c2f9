// The engine's time budget: a check the time limit stops before it compared every element is
// inconclusive and says how far it got in a structured field (CheckOutcome.stoppedAtTimeLimit),
// which the CLI turns into a failed run. The clock is a counter here, so nothing depends on speed.

import assert from 'node:assert/strict';
import { runCheck } from '../../server/src/engine/check';
import { DEFAULT_SETTINGS } from '../../server/src/engine/settings';
import { functionOp, show, spec } from './opBuilder';

// Σ x_i³: a number-valued forward couples every element to the one output, so the full method
// perturbs each of the 120 elements in turn (d/dx x³ = 3x², Abramowitz & Stegun 3.3.1 power rule).
const cubeSum = functionOp({
  forward: (x: Float64Array) => {
    let s = 0;
    for (let i = 0; i < x.length; i++) s += x[i]! ** 3;
    return s;
  },
  backward: (x: Float64Array) => x.map((v) => 3 * v * v),
  params: [['x', spec('f64', [120])]],
  backwardArgs: ['x'],
});

describe('engine: the time limit', () => {
  it('stops a check that runs out of time, inconclusive, with how far it got', () => {
    // Each clock read advances 1 ms, so the baseline's timed forward calls measure 1 ms: a slow
    // forward, for which the engine reads the clock at every element (fullCheck.ts, clockEvery,
    // its phases' stop at 80 %) and before every call of the op (its hard stop, at 90 %). A 50 ms
    // limit runs out part way, before element 120, and either stop reports how far the element
    // loop got.
    let now = 0;
    const o = runCheck(cubeSum.exposed, { op: cubeSum.op, settings: { ...DEFAULT_SETTINGS, timeLimitMs: 50 } }, () => (now += 1));
    assert.equal(o.verdict, 'inconclusive', show(o));
    const stop = o.stoppedAtTimeLimit;
    assert.ok(stop, show(o));
    assert.equal(stop.param, 'x');
    assert.equal(stop.stage, 'elements');
    assert.equal(stop.total, 120);
    assert.equal(stop.timeLimitMs, 50);
    assert.ok(stop.done > 0 && stop.done < 120, String(stop.done));
    assert.match(o.message, new RegExp(`stopped at the time limit after ${stop.done} of 120 elements`));
    assert.deepEqual(JSON.parse(JSON.stringify(o)), o, 'the field crosses the process boundary as JSON');
  });

  it('sets no such field when the check finishes (a clock that stands still)', () => {
    const o = runCheck(cubeSum.exposed, { op: cubeSum.op, settings: { ...DEFAULT_SETTINGS, timeLimitMs: 50 } }, () => 0);
    assert.equal(o.verdict, 'pass', show(o));
    assert.equal(o.stoppedAtTimeLimit, undefined);
  });

  // The matrix kinds read the clock the same way and stop the same way: inconclusive, saying how
  // far they got (a Jacobian column by column, a Hessian by second differences column by column).
  const cubes = (x: Float64Array): Float64Array =>
    Float64Array.of(
      x.reduce((s, v) => s + v ** 3, 0),
      x.reduce((s, v) => s + v * v, 0),
    );
  const kindStopped = (kind: 'jacobian' | 'hessian') => {
    const built = functionOp({
      forward: kind === 'jacobian' ? cubes : (x: Float64Array) => cubes(x)[0]!,
      // Right derivatives (power rule, as above): only the time limit stands between them and a pass.
      backward:
        kind === 'jacobian'
          ? (x: Float64Array) => [Array.from(x, (v) => 3 * v * v), Array.from(x, (v) => 2 * v)]
          : (x: Float64Array) => Array.from(x, (_, i) => Array.from(x, (v, j) => (i === j ? 6 * v : 0))),
      params: [['x', spec('f64', [kind === 'jacobian' ? 120 : 30])]],
      backwardArgs: ['x'],
    });
    built.op.kind = kind;
    let now = 0;
    return runCheck(built.exposed, { op: built.op, settings: { ...DEFAULT_SETTINGS, timeLimitMs: 25 } }, () => (now += 1));
  };
  for (const kind of ['jacobian', 'hessian'] as const) {
    it(`a @${kind} the time limit stops is inconclusive and says how far it got`, () => {
      const o = kindStopped(kind);
      const n = kind === 'jacobian' ? 120 : 30;
      assert.equal(o.verdict, 'inconclusive', show(o));
      const stop = o.stoppedAtTimeLimit;
      assert.ok(stop, show(o));
      assert.equal(stop.stage, 'elements');
      assert.equal(stop.total, n);
      assert.ok(stop.done < n, String(stop.done));
      assert.match(o.message, new RegExp(`stopped at the time limit after ${stop.done} of ${n} columns`));
    });
  }
});
