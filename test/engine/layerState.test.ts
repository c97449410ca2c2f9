// Layers written the way training frameworks write them (correct code must not be flagged;
// docs/code-shapes.md): a backward that accumulates into the
// instance's gradient fields, a backward that reuses its upstream gradient in place, and a
// backward that reads a cache its forward did not
// refresh. Derivatives by the chain rule: d(W·x)/dW[i][j] = dy[i]·x[j], d/dx[j] = Σ_i W[i][j]·dy[i].

import assert from 'node:assert/strict';
import { check, methodOp, show, spec } from './opBuilder';

const ROWS = 3;
const COLS = 4;

/** Shape: a dense layer that caches its input and accumulates `this.gradW[k] += ...`. */
class AccumulatingDense {
  weight = new Float64Array(ROWS * COLS);
  gradW = new Float64Array(ROWS * COLS); // zeroed by the training loop between steps, not here
  gradX = new Float64Array(COLS);
  lastInput = new Float64Array(COLS);

  forward(x: Float64Array): Float64Array {
    this.lastInput = Float64Array.from(x);
    const y = new Float64Array(ROWS);
    for (let i = 0; i < ROWS; i++) for (let j = 0; j < COLS; j++) y[i] += this.weight[i * COLS + j] * x[j];
    return y;
  }

  backward(dy: Float64Array): { x: Float64Array; weight: Float64Array } {
    this.gradX.fill(0);
    for (let i = 0; i < ROWS; i++) {
      for (let j = 0; j < COLS; j++) {
        this.gradW[i * COLS + j] += dy[i] * this.lastInput[j];
        this.gradX[j] += this.weight[i * COLS + j] * dy[i];
      }
    }
    return { x: this.gradX, weight: this.gradW };
  }
}

describe('engine: layer state between backward calls', () => {
  it('an accumulating backward (`this.gradW[k] += ...`) passes: every call sees the instance as the forward left it', () => {
    const o = check(
      methodOp({
        cls: AccumulatingDense,
        forwardName: 'forward',
        backwardName: 'backward',
        params: [
          ['x', spec('f64', [COLS])],
          ['this.weight', spec('f64', [ROWS * COLS])],
        ],
      }),
    );
    assert.equal(o.verdict, 'pass', show(o));
    assert.ok(o.calls.backward >= 2, 'the check calls the backward several times on one instance');
  });

  it("a backward keying a field's gradient as the @sample tag names it ('this.weight') is read like 'weight'", () => {
    class Keyed extends AccumulatingDense {
      keyedLikeTag(dy: Float64Array): Record<string, Float64Array> {
        const r = this.backward(dy);
        return { x: r.x, 'this.weight': r.weight };
      }
      // Both keys: 'this.weight' is the field's (here the true gradient), 'weight' is ignored.
      bothKeys(dy: Float64Array): Record<string, Float64Array> {
        const r = this.backward(dy);
        return { x: r.x, 'this.weight': r.weight, weight: r.weight.map((v) => 2 * v) };
      }
      noKey(dy: Float64Array): Record<string, Float64Array> {
        return { x: this.backward(dy).x, w: new Float64Array(ROWS * COLS) };
      }
    }
    const op = (backwardName: string) =>
      methodOp({
        cls: Keyed,
        forwardName: 'forward',
        backwardName,
        params: [
          ['x', spec('f64', [COLS])],
          ['this.weight', spec('f64', [ROWS * COLS])],
        ],
      });
    const keyed = check(op('keyedLikeTag'));
    assert.equal(keyed.verdict, 'pass', show(keyed));
    assert.equal(check(op('bothKeys')).verdict, 'pass');
    const none = check(op('noKey'));
    assert.equal(none.verdict, 'error');
    assert.match(none.message, /no gradient 'weight' \(it has 'x', 'w'/);
  });

  it('the same layer with a wrong weight gradient is still a mismatch', () => {
    class Wrong extends AccumulatingDense {
      override backward(dy: Float64Array): { x: Float64Array; weight: Float64Array } {
        const r = super.backward(dy);
        r.weight[5] *= 1.01; // a planted 1 % error in one element
        return r;
      }
    }
    const o = check(
      methodOp({
        cls: Wrong,
        forwardName: 'forward',
        backwardName: 'backward',
        params: [
          ['x', spec('f64', [COLS])],
          ['this.weight', spec('f64', [ROWS * COLS])],
        ],
      }),
    );
    assert.equal(o.verdict, 'mismatch', show(o));
  });

  it('a layer keeping its accumulator in a #private field passes with a fresh instance per backward call', () => {
    /** Shape: `#gradW` accumulated by the backward; a snapshot of own fields cannot see it. */
    class PrivateDense {
      weight = new Float64Array(ROWS * COLS);
      #gradW = new Float64Array(ROWS * COLS);
      #input = new Float64Array(COLS);
      forward(x: Float64Array): Float64Array {
        this.#input = Float64Array.from(x);
        const y = new Float64Array(ROWS);
        for (let i = 0; i < ROWS; i++) for (let j = 0; j < COLS; j++) y[i] += this.weight[i * COLS + j] * x[j];
        return y;
      }
      backward(dy: Float64Array): { x: Float64Array; weight: Float64Array } {
        const dx = new Float64Array(COLS);
        for (let i = 0; i < ROWS; i++) {
          for (let j = 0; j < COLS; j++) {
            this.#gradW[i * COLS + j] += dy[i] * this.#input[j];
            dx[j] += this.weight[i * COLS + j] * dy[i];
          }
        }
        return { x: dx, weight: this.#gradW };
      }
    }
    const built = methodOp({
      cls: PrivateDense,
      forwardName: 'forward',
      backwardName: 'backward',
      params: [
        ['x', spec('f64', [COLS])],
        ['this.weight', spec('f64', [ROWS * COLS])],
      ],
    });
    // What discovery sets for a class with #private members (buildOp.declaresPrivateMembers).
    built.op.target.renewInstance = true;
    const o = check(built);
    assert.equal(o.verdict, 'pass', show(o));
    built.op.target.renewInstance = false;
    assert.equal(check(built).verdict, 'mismatch', 'without a fresh instance the #private accumulator leaks between calls');
  });

  it('a backward that reads a cache the forward did not refresh (stale from an earlier call) is caught', () => {
    /** Shape: a forward that caches its input only once, so later calls leave a stale cache. */
    class CachesOnce {
      scale = new Float64Array(COLS);
      cached: Float64Array | null = null;
      forward(x: Float64Array): Float64Array {
        if (this.cached === null) this.cached = Float64Array.from(x);
        return x.map((v, j) => this.scale[j] * v * v);
      }
      backward(dy: Float64Array): Float64Array {
        const x = this.cached as Float64Array;
        return x.map((v, j) => 2 * this.scale[j] * v * dy[j]);
      }
    }
    const o = check(
      methodOp({
        cls: CachesOnce,
        forwardName: 'forward',
        backwardName: 'backward',
        params: [['x', spec('f64', [COLS], [0.5, 2])]],
        // The instance has served an earlier step at another input, as in a training loop.
        construct: () => {
          const layer = new CachesOnce();
          layer.scale.fill(1.5);
          layer.forward(new Float64Array(COLS).fill(-3));
          return layer;
        },
      }),
    );
    assert.equal(o.verdict, 'mismatch', show(o));
  });

  it('a backward that changes its upstream gradient in place is reported like any input change', () => {
    /** Shape: a backward that scales `dy` in place and returns it. */
    class InPlace {
      forward(x: Float64Array): Float64Array {
        return x.map((v) => 3 * v);
      }
      backward(dy: Float64Array): Float64Array {
        for (let i = 0; i < dy.length; i++) dy[i] *= 3;
        return dy;
      }
    }
    const o = check(methodOp({ cls: InPlace, forwardName: 'forward', backwardName: 'backward', params: [['x', spec('f64', [5])]] }));
    assert.equal(o.verdict, 'error', show(o));
    assert.match(o.message, /backward changed its input '\$dy' at \[0\]/);
  });
});
