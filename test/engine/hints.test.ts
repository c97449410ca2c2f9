// Hints on a mismatch appear only when the data support them: planted bugs of each kind get
// their hint, and a bug of another kind does not get it.

import assert from 'node:assert/strict';
import { check, functionOp, show, spec } from './opBuilder';

const softplus = (x: Float64Array) => x.map((v) => Math.log1p(Math.exp(v)));
const sig = (v: number) => 1 / (1 + Math.exp(-v));

function softplusWith(bug: (g: number, x: number, i: number) => number) {
  return functionOp({
    forward: softplus,
    backward: (x: Float64Array, dy: Float64Array) => x.map((v, i) => bug(sig(v) * dy[i], v, i)),
    params: [['x', spec('f64', [16], [-3, 3])]],
  });
}

function hintsOf(built: ReturnType<typeof functionOp>): { param: string[]; op: string[] } {
  const o = check(built);
  assert.equal(o.verdict, 'mismatch', show(o));
  return { param: o.params.flatMap((p) => p.hints), op: o.hints };
}

describe('engine: evidence-backed hints', () => {
  it('constant factor: names the factor, and no sign or one-index hint', () => {
    const h = hintsOf(softplusWith((g) => 2 * g));
    assert.deepEqual(h.param, ['gradient is 2× the numeric one']);
  });

  it('constant factor off by 1e-4 relative: names 1.0001', () => {
    const h = hintsOf(softplusWith((g) => 1.0001 * g));
    assert.deepEqual(h.param, ['gradient is 1.0001× the numeric one']);
  });

  it('sign flipped', () => {
    const h = hintsOf(softplusWith((g) => -g));
    assert.deepEqual(h.param, ['sign is flipped: the backward gives −1× the numeric gradient']);
  });

  it('wrong only where the input is negative', () => {
    const h = hintsOf(softplusWith((g, x) => (x < 0 ? 0.5 * g : g)));
    assert.ok(
      h.param.some((t) => /^wrong only where x < 0 \(\d+ of \d+ such elements disagree; none where x ≥ 0\)$/.test(t)),
      JSON.stringify(h),
    );
    assert.ok(h.param.includes('gradient is 0.5× the numeric one'), 'the factor holds on the disagreeing elements too');
  });

  it('a bug unrelated to the sign of x gets no "x < 0" hint and no factor hint', () => {
    const h = hintsOf(softplusWith((g, x) => g + 0.01 * x * x));
    assert.deepEqual(h.param, []);
  });

  it('wrong at one index: names it and claims no factor', () => {
    const h = hintsOf(softplusWith((g, _x, i) => (i === 9 ? 3 * g : g)));
    assert.deepEqual(h.param, ['wrong only at x[9]; every other element agrees']);
  });

  it('transposed gradient of a 2-D parameter', () => {
    const rows = 3;
    const cols = 4;
    const built = functionOp({
      forward: (W: Float64Array, x: Float64Array) => {
        const y = new Float64Array(rows);
        for (let r = 0; r < rows; r++) for (let c = 0; c < cols; c++) y[r] += W[r * cols + c] * x[c];
        return y;
      },
      backward: (W: Float64Array, x: Float64Array, dy: Float64Array) => {
        const dW = new Float64Array(rows * cols);
        const dx = new Float64Array(cols);
        // Bug: dW laid out as cols×rows (the transpose), row-major.
        for (let r = 0; r < rows; r++)
          for (let c = 0; c < cols; c++) {
            dW[c * rows + r] = dy[r] * x[c];
            dx[c] += W[r * cols + c] * dy[r];
          }
        return [dW, dx];
      },
      params: [
        ['W', spec('f64', [rows, cols])],
        ['x', spec('f64', [cols])],
      ],
    });
    const o = check(built);
    assert.equal(o.verdict, 'mismatch', show(o));
    assert.deepEqual(o.params[0].hints, ['gradient looks transposed: it matches the numeric gradient laid out as 4×3']);
    assert.equal(o.params[1].verdict, 'pass');
  });

  it('two parameters of the same shape with swapped gradients: op-level hint', () => {
    const built = functionOp({
      forward: (a: Float64Array, b: Float64Array) => a.map((v, i) => v * Math.exp(b[i])),
      // Bug: the two gradients are returned in the wrong order.
      backward: (a: Float64Array, b: Float64Array, dy: Float64Array) => [a.map((v, i) => v * Math.exp(b[i]) * dy[i]), b.map((v, i) => Math.exp(v) * dy[i])],
      params: [
        ['a', spec('f64', [6])],
        ['b', spec('f64', [6])],
      ],
    });
    const h = hintsOf(built);
    assert.deepEqual(h.op, ["the gradients of 'a' and 'b' look swapped: each matches the other's numeric gradient"]);
  });
});
