// Dot-product probes judged against their own error and split down to single elements
// (adaptive group testing: Dorfman 1943; binary splitting, Hwang 1972) on dense parameters:
// one, two and three wrong elements are located, errors that cancel under equal signs are still
// caught (random signs per probe), kinks inside a probed set never become a mismatch, and a
// correct op passes with a stated detection floor. The reference for every gradient is a
// handbook formula: d(Wx)/dW = dy·xᵀ, d(Wx)/dx = Wᵀdy (matrix calculus, e.g. Petersen &
// Pedersen, The Matrix Cookbook, §2.4), and the softmax Jacobian diag(y) − y yᵀ (same, §2.8
// from memory: y_i(δ_ij − y_j)).

import assert from 'node:assert/strict';
import { check, functionOp, show, spec } from './opBuilder';

/** y = W x with W rows×cols row-major, both differentiated; `wrong` scales dW entries. */
function matVec(rows: number, cols: number, wrong: [number, number][] = []) {
  return functionOp({
    forward: (w: Float64Array, x: Float64Array) => {
      const y = new Float64Array(rows);
      for (let i = 0; i < rows; i++) {
        let s = 0;
        for (let j = 0; j < cols; j++) s += w[i * cols + j] * x[j];
        y[i] = s;
      }
      return y;
    },
    backward: (w: Float64Array, x: Float64Array, dy: Float64Array) => {
      const dw = new Float64Array(rows * cols);
      const dx = new Float64Array(cols);
      for (let i = 0; i < rows; i++) {
        for (let j = 0; j < cols; j++) {
          dw[i * cols + j] = dy[i] * x[j];
          dx[j] += w[i * cols + j] * dy[i];
        }
      }
      for (const [at, factor] of wrong) dw[at] *= factor;
      return { w: dw, x: dx };
    },
    params: [
      ['w', spec('f64', [rows, cols])],
      ['x', spec('f64', [cols])],
    ],
  });
}

/** Softmax over one vector of n, a dense Jacobian; `wrong` adds to gradient entries (relative to the largest). */
function softmax(n: number, wrong: [number, number][] = [], opts: { absInside?: boolean } = {}) {
  return functionOp({
    forward: (z: Float64Array) => {
      const y = new Float64Array(n);
      let top = -Infinity;
      for (let i = 0; i < n; i++) top = Math.max(top, z[i]);
      let sum = 0;
      for (let i = 0; i < n; i++) {
        // With absInside the logits pass through |z| first: a kink at 0 for every element.
        const v = opts.absInside ? Math.abs(z[i]) : z[i];
        y[i] = Math.exp(v - Math.abs(top) - 2);
        sum += y[i];
      }
      for (let i = 0; i < n; i++) y[i] /= sum;
      return y;
    },
    backward: (z: Float64Array, y: Float64Array, dy: Float64Array) => {
      let dot = 0;
      for (let i = 0; i < n; i++) dot += dy[i] * y[i];
      const g = new Float64Array(n);
      for (let i = 0; i < n; i++) {
        const d = y[i] * (dy[i] - dot);
        g[i] = opts.absInside ? (z[i] >= 0 ? d : -d) : d;
      }
      let big = 0;
      for (let i = 0; i < n; i++) big = Math.max(big, Math.abs(g[i]));
      for (const [at, rel] of wrong) g[at] += rel * big;
      return g;
    },
    params: [['z', spec('f64', [n], [-2, 2])]],
    backwardArgs: ['z', '$y', '$dy'],
  });
}

const wrongIndex = (o: ReturnType<typeof check>, p: number): number => {
  const q = o.params[p];
  if (!q.worst) return -1;
  let f = 0;
  for (let d = 0; d < q.shape.length; d++) f = f * q.shape[d] + q.worst.index[d];
  return f;
};

describe('engine: dot-product probes split down to single elements (Dorfman 1943, Hwang 1972)', function () {
  this.timeout(60_000);

  it('a correct dense y = W x (W 200×200, x 200) passes by probes and states a detection floor', () => {
    const o = check(matVec(200, 200), { seed: 7 });
    assert.equal(o.verdict, 'pass', show(o));
    assert.equal(o.params[0].method, 'dot-product', show(o));
    const floor = o.params[0].detectionFloor ?? NaN;
    // The floor is at least the tolerance and, for a linear map in float64, far below 1e-4.
    assert.ok(floor >= 1e-6 && floor < 1e-4, `floor ${floor}`);
    assert.equal(o.params[1].method, 'dot-product', show(o));
    // Far fewer forward calls than the exact schemes (200 colour classes for W, 200 columns for x: 800 calls).
    assert.ok(o.calls.forward < 400, `forward calls ${o.calls.forward}`);
  });

  for (const [label, wrong] of [
    ['one wrong element', [[12345, 1 + 1e-4]]],
    ['two wrong elements', [[17, 1 + 1e-3], [29000, 1 - 1e-3]]],
    ['three wrong elements', [[5, 1 + 1e-3], [18000, 1 + 1e-3], [35000, 1 + 1e-3]]],
  ] as [string, [number, number][]][]) {
    it(`${label} of a dense W 200×200 are caught and the reported element is one of them`, () => {
      for (const seed of [1, 2, 3]) {
        const o = check(matVec(200, 200, wrong), { seed });
        assert.equal(o.verdict, 'mismatch', show(o));
        assert.equal(o.params[0].verdict, 'mismatch', show(o));
        assert.ok(wrong.some(([at]) => at === wrongIndex(o, 0)), `reported ${wrongIndex(o, 0)}: ${show(o)}`);
        assert.equal(o.params[1].verdict, 'pass', show(o));
      }
    });
  }

  it('two wrong elements whose errors cancel under equal signs are still caught (random signs)', () => {
    // Softmax entries next to each other, one up and one down by the same amount: a probe along
    // all-equal signs would see nothing; random signs see 2·e in half of the probes.
    for (const seed of [1, 2, 3, 4]) {
      const o = check(softmax(3000, [[100, 1e-3], [101, -1e-3]]), { seed });
      assert.equal(o.verdict, 'mismatch', show(o));
      assert.equal(o.params[0].method, 'dot-product');
      assert.ok([100, 101].includes(wrongIndex(o, 0)), show(o));
    }
  });

  it('a single wrong element of a softmax over 20,000 is located', () => {
    const o = check(softmax(20_000, [[0, 1e-3]]), { seed: 11 });
    assert.equal(o.verdict, 'mismatch', show(o));
    assert.equal(wrongIndex(o, 0), 0, show(o));
  });

  it('a correct softmax over 20,000 passes by probes', () => {
    const o = check(softmax(20_000), { seed: 11 });
    assert.equal(o.verdict, 'pass', show(o));
    assert.equal(o.params[0].method, 'dot-product');
  });

  it('a correct float32 softmax over 3,000 and a badly scaled one (outputs × 1e20) pass by probes', () => {
    const f32 = functionOp({
      forward: (z: Float32Array) => {
        let sum = 0;
        for (let i = 0; i < z.length; i++) sum += Math.exp(z[i]);
        return Float32Array.from(z, (v) => Math.exp(v) / sum);
      },
      backward: (z: Float32Array, y: Float32Array, dy: Float32Array) => {
        let dot = 0;
        for (let i = 0; i < z.length; i++) dot += dy[i] * y[i];
        return Float32Array.from(y, (v, i) => v * (dy[i] - dot));
      },
      params: [['z', spec('f32', [3000], [-2, 2])]],
      backwardArgs: ['z', '$y', '$dy'],
    });
    const scaled = functionOp({
      forward: (z: Float64Array) => {
        let sum = 0;
        for (let i = 0; i < z.length; i++) sum += Math.exp(z[i]);
        return Float64Array.from(z, (v) => (1e20 * Math.exp(v)) / sum);
      },
      backward: (z: Float64Array, y: Float64Array, dy: Float64Array) => {
        let dot = 0;
        for (let i = 0; i < z.length; i++) dot += dy[i] * y[i];
        return Float64Array.from(y, (v, i) => v * (dy[i] - dot / 1e20));
      },
      params: [['z', spec('f64', [3000], [-2, 2])]],
      backwardArgs: ['z', '$y', '$dy'],
    });
    for (const seed of [1, 2, 3]) {
      for (const built of [f32, scaled]) {
        const o = check(built, { seed });
        assert.equal(o.params[0].method, 'dot-product', show(o));
        assert.equal(o.verdict, 'pass', show(o));
      }
    }
  });

  it('a search cut short by the time limit is never a pass', () => {
    // 1 ms is spent before the first probe (inputs, baseline calls): no probe runs, no floor.
    const o = check(softmax(20_000, [[0, 1e-3]]), { seed: 11, timeLimitMs: 1 });
    assert.equal(o.verdict, 'inconclusive', show(o));
  });

  it('kinks inside a probed set (|z| before the softmax, no avoid points) never become a mismatch', () => {
    for (const seed of [1, 2, 3]) {
      const o = check(softmax(3000, [], { absInside: true }), { seed });
      assert.notEqual(o.verdict, 'mismatch', show(o));
      assert.notEqual(o.verdict, 'error', show(o));
    }
  });
});
