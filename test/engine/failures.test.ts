// Bad ops are reported, never thrown: each failure is a verdict with a message naming the part
// of the op at fault (docs/annotations.md, "Outputs": "Bad shapes, missing entries, NaN or Infinity, a forward or
// backward that changes its inputs, a thrown error: each is reported as a clear error").

import assert from 'node:assert/strict';
import { runCheck } from '../../server/src/engine/check';
import { DEFAULT_SETTINGS } from '../../server/src/engine/settings';
import type { CheckOutcome } from '../../server/src/model/types';
import { check, clock, functionOp, show, spec } from './opBuilder';

const x4 = spec('f64', [4]);
const square = (x: Float64Array) => x.map((v) => v * v);
const squareBackward = (x: Float64Array, dy: Float64Array) => x.map((v, i) => 2 * v * dy[i]);

function expectVerdict(o: CheckOutcome, verdict: string, pattern: RegExp): void {
  assert.equal(o.verdict, verdict, show(o));
  assert.match(o.message, pattern, show(o));
  // The outcome crosses a process boundary as JSON: no NaN or Infinity may be in it.
  assert.deepEqual(JSON.parse(JSON.stringify(o)), o, 'outcome is JSON-safe');
}

describe('engine: failures become verdicts with messages', () => {
  it('forward throws at the sample point', () => {
    const o = check(
      functionOp({
        forward: () => {
          throw new Error('boom');
        },
        backward: squareBackward,
        params: [['x', x4]],
      }),
    );
    expectVerdict(o, 'error', /^forward threw at the sample point: boom$/);
  });

  it('forward throws only at a perturbed point: the message names the element and value', () => {
    let calls = 0;
    const o = check(
      functionOp({
        forward: (x: Float64Array) => {
          if (++calls > 2) throw new RangeError('out of domain');
          return square(x);
        },
        backward: squareBackward,
        params: [['x', x4]],
      }),
    );
    expectVerdict(o, 'error', /^forward threw with x\[0\] = -?[\d.e-]+: RangeError: out of domain$/);
  });

  it('forward or backward is not a function', () => {
    const a = functionOp({ forward: square, backward: squareBackward, params: [['x', x4]] });
    a.exposed.op = 42;
    expectVerdict(check(a), 'error', /^forward 'op' is not a function \(got the number 42\)$/);
    const b = functionOp({ forward: square, backward: squareBackward, params: [['x', x4]] });
    delete b.exposed.opBackward;
    expectVerdict(check(b), 'error', /^backward 'opBackward' is not a function \(got undefined\)$/);
  });

  it('forward output with NaN names the output index', () => {
    const o = check(
      functionOp({
        forward: (x: Float64Array) => {
          const y = square(x);
          y[2] = NaN;
          return y;
        },
        backward: squareBackward,
        params: [['x', x4]],
      }),
    );
    expectVerdict(o, 'error', /^forward output has NaN at index \[2\] at the sample point$/);
  });

  it('forward output with Infinity in a nested array names the multi-index', () => {
    const o = check(
      functionOp({
        forward: (x: Float64Array) => [
          [x[0], x[1]],
          [x[2], x[3] / 0],
        ],
        backward: squareBackward,
        params: [['x', x4]],
      }),
    );
    expectVerdict(o, 'error', /^forward output has -?Infinity at index \[1, 1\]/);
  });

  it('forward output with NaN at a perturbed point names the output index and the moved element', () => {
    const o = check(
      functionOp({
        forward: (x: Float64Array) => x.map((v) => Math.sqrt(v)),
        backward: (x: Float64Array, dy: Float64Array) => x.map((v, i) => dy[i] / (2 * Math.sqrt(v))),
        params: [['x', undefined]],
        samples: () => [Float64Array.from([0.5, 1e-7, 0.3])],
      }),
    );
    expectVerdict(o, 'error', /^forward output has NaN at index \[1\] with x\[1\] = -[\d.e-]+$/);
  });

  it('backward returns the wrong number of gradients', () => {
    const o = check(
      functionOp({
        forward: (a: Float64Array, b: Float64Array) => a.map((v, i) => v * b[i]),
        backward: (a: Float64Array, b: Float64Array, dy: Float64Array) => [b.map((v, i) => v * dy[i]), a, a],
        params: [
          ['a', x4],
          ['b', x4],
        ],
      }),
    );
    expectVerdict(o, 'error', /^backward returned 3 gradients for 2 parameters \('a', 'b'\)$/);
  });

  it('backward returns a gradient of the wrong shape', () => {
    const o = check(functionOp({ forward: square, backward: () => new Float64Array(3), params: [['x', x4]] }));
    expectVerdict(o, 'error', /^backward: gradient of 'x' has 3 elements, expected shape \[4\] \(4 elements\)$/);
  });

  it('backward returns gradients whose shapes fit the other parameter: says they look swapped', () => {
    const o = check(
      functionOp({
        forward: (W: Float64Array, b: Float64Array) => W.map((v, i) => v + b[i % 2]),
        backward: () => [new Float64Array(2), new Float64Array(6)],
        params: [
          ['W', spec('f64', [3, 2])],
          ['b', spec('f64', [2])],
        ],
      }),
    );
    expectVerdict(o, 'error', /gradients of 'W' and 'b' look swapped/);
  });

  it('backward returns NaN: names the parameter and index', () => {
    const o = check(
      functionOp({
        forward: square,
        backward: (x: Float64Array, dy: Float64Array) => {
          const g = squareBackward(x, dy);
          g[3] = NaN;
          return g;
        },
        params: [['x', x4]],
      }),
    );
    expectVerdict(o, 'error', /^gradient of 'x' has NaN at index \[3\]$/);
  });

  it('forward that changes its input is an error naming the input and index', () => {
    const o = check(
      functionOp({
        forward: (x: Float64Array) => {
          const y = square(x);
          x[1] = 0;
          return y;
        },
        backward: squareBackward,
        params: [['x', x4]],
      }),
    );
    expectVerdict(o, 'error', /^forward changed its input 'x' at \[1\] from -?[\d.e-]+ to 0$/);
  });

  it('backward that changes its input is an error naming the input', () => {
    const o = check(
      functionOp({
        forward: square,
        backward: (x: Float64Array, dy: Float64Array) => {
          const g = squareBackward(x, dy);
          x.fill(0);
          return g;
        },
        params: [['x', x4]],
      }),
    );
    expectVerdict(o, 'error', /^backward changed its input 'x' at \[0\]/);
  });

  it('a forward that is not deterministic is inconclusive', () => {
    let calls = 0;
    const o = check(functionOp({ forward: (x: Float64Array) => x.map((v) => v * v + 1e-9 * ++calls), backward: squareBackward, params: [['x', x4]] }));
    expectVerdict(o, 'inconclusive', /^forward is not deterministic: two calls at the same input differ at index \[0\]/);
  });

  it('a backward without $dy needs a forward that returns a number', () => {
    const o = check(functionOp({ forward: square, backward: (x: Float64Array) => x, params: [['x', x4]], backwardArgs: ['x'] }));
    expectVerdict(o, 'error', /^the backward takes no \$dy, so the forward must return a number; it returned 4 values$/);
  });

  it('a parameter without @sample, and an op whose every input is fixed', () => {
    expectVerdict(check(functionOp({ forward: square, backward: squareBackward, params: [['x', undefined]] })), 'error', /^parameter 'x' has no @sample$/);
    expectVerdict(
      check(functionOp({ forward: square, backward: squareBackward, params: [['x', spec('f64', [4], [-1, 1], { fixed: true })]] })),
      'error',
      /^no parameter is differentiated/,
    );
  });

  it('a @samples factory returning the wrong number of arguments', () => {
    const o = check(functionOp({ forward: square, backward: squareBackward, params: [['x', undefined]], samples: () => [] }));
    expectVerdict(o, 'error', /^@samples opSamples: returned 0 arguments, the forward takes 1$/);
  });

  it('an op with annotation problems is not run', () => {
    const built = functionOp({
      forward: () => {
        throw new Error('must not run');
      },
      backward: squareBackward,
      params: [['x', x4]],
    });
    built.op.problems = [{ line: 3, column: 4, message: "unknown tag '@sampel' (did you mean '@sample'?)" }];
    const o = check(built);
    expectVerdict(o, 'error', /unknown tag/);
    assert.equal(o.calls.forward, 0);
  });

  it('a forward output object with a throwing getter is an error naming the forward output', () => {
    const o = check(
      functionOp({
        forward: () => ({
          get y(): never {
            throw new Error('trap');
          },
        }),
        backward: squareBackward,
        params: [['x', x4]],
      }),
    );
    expectVerdict(o, 'error', /^reading the forward output threw trap$/);
  });

  it('runCheck never throws, even on a malformed request', () => {
    const o = runCheck({}, { op: {} as never, settings: DEFAULT_SETTINGS }, clock);
    assert.equal(o.verdict, 'error', show(o));
    const p = runCheck({ op: null }, null as never, clock);
    assert.equal(p.verdict, 'error', show(p));
  });

  it('a hostile backward result (a getter that throws) is an error, not a crash', () => {
    const o = check(
      functionOp({
        forward: square,
        backward: () => ({
          get x(): never {
            throw new Error('trap');
          },
        }),
        params: [
          ['x', x4],
          ['y', x4],
        ],
        backwardArgs: ['x', '$dy'],
      }),
    );
    expectVerdict(o, 'error', /^reading what the backward returned threw trap$/);
  });
});
