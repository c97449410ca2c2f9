// `@gradientField PARAM this.FIELD` (docs/annotations.md): a layer whose backward returns dx and
// leaves the parameter gradients on the instance, as small training loops write it. Oracle: the
// chain rule for y = W x + b — d/dW[o][i] = dy[o]·x[i], d/db[o] = dy[o], d/dx[i] = Σ_o W[o][i]·dy[o]
// (standard matrix calculus, e.g. Petersen & Pedersen, The Matrix Cookbook, §2.4; cited from
// memory) — checked directly below, and the check's own finite differences.

import assert from 'node:assert/strict';
import { check, methodOp, show, spec } from './opBuilder';
import type { GradientField } from '../../server/src/model/types';

const N_IN = 4;
const N_OUT = 2;

/** Shape: the layer of a small training loop; dW and db accumulate and are zeroed by the loop. */
class Linear {
  W = new Float64Array(N_OUT * N_IN);
  b = new Float64Array(N_OUT);
  dW = new Float64Array(N_OUT * N_IN);
  db = new Float64Array(N_OUT);
  private x: Float64Array = new Float64Array(0);

  forward(x: Float64Array): Float64Array {
    this.x = x;
    const y = new Float64Array(N_OUT);
    for (let o = 0; o < N_OUT; o++) {
      let s = this.b[o]!;
      for (let i = 0; i < N_IN; i++) s += this.W[o * N_IN + i]! * x[i]!;
      y[o] = s;
    }
    return y;
  }

  backward(dy: Float64Array): Float64Array {
    const dx = new Float64Array(N_IN);
    for (let o = 0; o < N_OUT; o++) {
      this.db[o]! += dy[o]!;
      for (let i = 0; i < N_IN; i++) {
        this.dW[o * N_IN + i]! += dy[o]! * this.x[i]!;
        dx[i]! += this.W[o * N_IN + i]! * dy[o]!;
      }
    }
    return dx;
  }
}

/** A layer that has already served a step: stale gradients the check must zero before each call. */
function usedLayer<T extends Linear>(make: () => T): () => T {
  return () => {
    const layer = make();
    layer.W.fill(0.3);
    layer.forward(new Float64Array(N_IN).fill(2));
    layer.backward(new Float64Array(N_OUT).fill(5));
    return layer;
  };
}

const FIELDS: GradientField[] = [
  { param: 'this.W', field: 'dW' },
  { param: 'this.b', field: 'db' },
];

function linearOp(cls: new () => Linear, backwardName = 'backward', fields: GradientField[] | null = FIELDS, construct?: () => object) {
  const built = methodOp({
    cls,
    forwardName: 'forward',
    backwardName,
    params: [
      ['x', spec('f64', [N_IN])],
      ['this.W', spec('f64', [N_OUT, N_IN])],
      ['this.b', spec('f64', [N_OUT])],
    ],
    ...(construct ? { construct } : {}),
  });
  if (fields) built.op.gradientFields = fields;
  return built;
}

describe('engine: gradients left in fields (@gradientField)', () => {
  it('the Linear layer agrees with the chain-rule identities (the oracle of the checks below)', () => {
    const layer = new Linear();
    for (let k = 0; k < layer.W.length; k++) layer.W[k] = 0.1 * k - 0.35;
    layer.b.set([0.2, -0.4]);
    const x = Float64Array.from([0.5, -1, 1.5, 2]);
    const dy = Float64Array.from([0.7, -1.3]);
    layer.forward(x);
    const dx = layer.backward(dy);
    for (let o = 0; o < N_OUT; o++) {
      assert.equal(layer.db[o], dy[o]);
      for (let i = 0; i < N_IN; i++) assert.equal(layer.dW[o * N_IN + i], dy[o]! * x[i]!);
    }
    for (let i = 0; i < N_IN; i++) assert.ok(Math.abs(dx[i]! - (layer.W[i]! * dy[0]! + layer.W[N_IN + i]! * dy[1]!)) < 1e-15);
  });

  it('passes: dx returned, dW and db read from the fields, zeroed before every call (stale gradients from a step before)', () => {
    const o = check(
      linearOp(
        Linear,
        'backward',
        FIELDS,
        usedLayer(() => new Linear()),
      ),
    );
    assert.equal(o.verdict, 'pass', show(o));
    assert.deepEqual(
      o.params.map((p) => p.name),
      ['x', 'this.W', 'this.b'],
    );
    assert.ok(o.calls.backward >= 2, 'several backward calls accumulate into the same fields');
  });

  it('one element of dW wrong by 1e-3 relative is a mismatch blamed on this.W at that element', () => {
    class Planted extends Linear {
      override backward(dy: Float64Array): Float64Array {
        const dx = super.backward(dy);
        this.dW[6]! += 1e-3 * (dy[1]! * (this as unknown as { x: Float64Array }).x[2]!); // dW[1][2] off by 1e-3 relative
        return dx;
      }
    }
    const o = check(linearOp(Planted));
    assert.equal(o.verdict, 'mismatch', show(o));
    const w = o.params.find((p) => p.name === 'this.W')!;
    assert.equal(w.verdict, 'mismatch', show(o));
    assert.deepEqual(w.worst?.index, [1, 2]);
    assert.ok(Math.abs(w.maxRelError - 1e-3) < 2e-4, `relative error ${w.maxRelError}`);
    for (const p of o.params) if (p.name !== 'this.W') assert.equal(p.verdict, 'pass', show(o));
  });

  it('a backward that assigns the fields (`=`) instead of accumulating passes too', () => {
    class Assigning extends Linear {
      override backward(dy: Float64Array): Float64Array {
        const x = (this as unknown as { x: Float64Array }).x;
        const dx = new Float64Array(N_IN);
        for (let o = 0; o < N_OUT; o++) {
          this.db[o] = dy[o]!;
          for (let i = 0; i < N_IN; i++) {
            this.dW[o * N_IN + i] = dy[o]! * x[i]!;
            dx[i]! += this.W[o * N_IN + i]! * dy[o]!;
          }
        }
        return dx;
      }
    }
    const o = check(
      linearOp(
        Assigning,
        'backward',
        FIELDS,
        usedLayer(() => new Assigning()),
      ),
    );
    assert.equal(o.verdict, 'pass', show(o));
  });

  it('every gradient in a field and no return value (nested number[] and number fields) passes', () => {
    /** Shape: w as nested number[], a scalar bias, gradients in gw (nested), gb (number), gx. */
    class Stored {
      w = [
        [0, 0, 0],
        [0, 0, 0],
      ];
      bias = 0;
      gw = [
        [9, 9, 9],
        [9, 9, 9],
      ];
      gb = 9;
      gx = new Float64Array(3).fill(9);
      input = new Float64Array(3);
      forward(x: Float64Array): Float64Array {
        this.input = Float64Array.from(x);
        return Float64Array.from(this.w.map((row) => row.reduce((s, v, i) => s + v * x[i]!, this.bias)));
      }
      backward(dy: Float64Array): void {
        for (let o = 0; o < 2; o++) {
          this.gb += dy[o]!;
          for (let i = 0; i < 3; i++) {
            this.gw[o]![i]! += dy[o]! * this.input[i]!;
            this.gx[i]! += this.w[o]![i]! * dy[o]!;
          }
        }
      }
    }
    const built = methodOp({
      cls: Stored as unknown as new () => object,
      forwardName: 'forward',
      backwardName: 'backward',
      params: [
        ['x', spec('f64', [3])],
        ['this.w', spec('num', [2, 3])],
        ['this.bias', spec('num')],
      ],
    });
    built.op.gradientFields = [
      { param: 'x', field: 'gx' },
      { param: 'this.w', field: 'gw' },
      { param: 'this.bias', field: 'gb' },
    ];
    const o = check(built);
    assert.equal(o.verdict, 'pass', show(o));
    // Without the zeroing, the 9s the constructor left would be read as part of every gradient.
    assert.equal(o.params.length, 3);
  });

  it('a field of the wrong size, or one the backward never writes, is an error naming the field', () => {
    class Short extends Linear {
      override backward(dy: Float64Array): Float64Array {
        const dx = super.backward(dy);
        this.dW = this.dW.slice(0, 7);
        return dx;
      }
    }
    const short = check(linearOp(Short));
    assert.equal(short.verdict, 'error', show(short));
    assert.match(short.message, /this\.dW \(the gradient of 'this\.W', @gradientField\) has 7 elements, expected shape \[2, 4\] \(8 elements\)/);

    const missing = check(
      linearOp(Linear, 'backward', [
        { param: 'this.W', field: 'gradW' },
        { param: 'this.b', field: 'db' },
      ]),
    );
    assert.equal(missing.verdict, 'error', show(missing));
    assert.match(missing.message, /@gradientField this\.W this\.gradW: the instance has no field 'gradW' after the backward call/);
  });

  it('without the tags, the error names the changed fields and the tags to add', () => {
    const o = check(linearOp(Linear, 'backward', null));
    assert.equal(o.verdict, 'error', show(o));
    assert.equal(
      o.message,
      "backward returned a Float64Array of 4; expected 3 gradients ('x', 'this.W', 'this.b') as an array in declaration order or an object keyed by parameter name; " +
        'the backward changed this.dW (8 elements, like this.W) and this.db (2, like this.b): if they hold those gradients, add `@gradientField this.W this.dW` and `@gradientField this.b this.db`',
    );
    // With one of the two tags, only the other is suggested.
    const half = check(linearOp(Linear, 'backward', [{ param: 'this.W', field: 'dW' }]));
    assert.equal(half.verdict, 'error', show(half));
    assert.match(half.message, /the backward changed this\.db \(2 elements, like this\.b\): if it holds that gradient, add `@gradientField this\.b this\.db`$/);
  });

  it('a backward that changes no field of a fitting size gets no suggestion', () => {
    class Keeps extends Linear {
      override backward(dy: Float64Array): Float64Array {
        const r = super.backward(dy);
        this.dW.fill(0);
        this.db.fill(0);
        return r;
      }
    }
    const o = check(linearOp(Keeps, 'backward', null));
    assert.equal(o.verdict, 'error', show(o));
    assert.doesNotMatch(o.message, /@gradientField/);
  });

  it('a class with #private state works on the fresh-instance path: the fields of the new instance are zeroed', () => {
    /** Shape: input cached in `#x`, a `#steps` counter; dW/db public, stale from the constructor. */
    class PrivateLinear {
      W = new Float64Array(N_OUT * N_IN);
      b = new Float64Array(N_OUT);
      dW = new Float64Array(N_OUT * N_IN).fill(4);
      db = new Float64Array(N_OUT).fill(4);
      #x = new Float64Array(N_IN);
      #steps = 0;
      forward(x: Float64Array): Float64Array {
        this.#x = Float64Array.from(x);
        const y = Float64Array.from(this.b);
        for (let o = 0; o < N_OUT; o++) for (let i = 0; i < N_IN; i++) y[o]! += this.W[o * N_IN + i]! * x[i]!;
        return y;
      }
      backward(dy: Float64Array): Float64Array {
        this.#steps++;
        const dx = new Float64Array(N_IN);
        for (let o = 0; o < N_OUT; o++) {
          this.db[o]! += dy[o]!;
          for (let i = 0; i < N_IN; i++) {
            this.dW[o * N_IN + i]! += dy[o]! * this.#x[i]!;
            dx[i]! += this.W[o * N_IN + i]! * dy[o]!;
          }
        }
        return dx;
      }
    }
    const built = linearOp(PrivateLinear as unknown as new () => Linear);
    built.op.target.renewInstance = true; // what discovery sets for a class with #private members
    const o = check(built);
    assert.equal(o.verdict, 'pass', show(o));
    built.op.gradientFields = undefined;
    assert.match(check(built).message, /add `@gradientField this\.W this\.dW` and `@gradientField this\.b this\.db`/);
  });

  it('a @hessian op uses a @backward that leaves its gradient in a field as the reference', () => {
    // Rosenbrock f(x, y) = 100(y − x²)² + (1 − x)², gradient and Hessian (Nocedal & Wright,
    // Numerical Optimization, 2nd ed., ch. 2).
    /** Shape: the forward caches its point for the gradient, as a layer caches its input. */
    class Valley {
      g = new Float64Array(2);
      at: Float64Array = new Float64Array(2);
      energy(v: Float64Array): number {
        this.at = v;
        return 100 * (v[1]! - v[0]! ** 2) ** 2 + (1 - v[0]!) ** 2;
      }
      gradient(): void {
        const v = this.at;
        this.g[0]! += -400 * v[0]! * (v[1]! - v[0]! ** 2) - 2 * (1 - v[0]!);
        this.g[1]! += 200 * (v[1]! - v[0]! ** 2);
      }
      hessian(v: Float64Array): number[][] {
        return [
          [1200 * v[0]! ** 2 - 400 * v[1]! + 2, -400 * v[0]!],
          [-400 * v[0]!, 200],
        ];
      }
    }
    const built = methodOp({ cls: Valley, forwardName: 'energy', backwardName: 'hessian', params: [['v', spec('f64', [2], [-1.5, 1.5])]], backwardArgs: ['v'] });
    built.op.kind = 'hessian';
    built.op.gradient = { name: 'gradient', backwardName: 'gradient', backwardIsMethod: true, args: [], gradientFields: [{ param: 'v', field: 'g' }] };
    const o = check(built);
    assert.equal(o.verdict, 'pass', show(o));
    assert.equal(o.params[0]!.method, 'gradient-differences', show(o));
    assert.match(o.message, /central differences of the @backward 'gradient', which passes/);
  });
});
