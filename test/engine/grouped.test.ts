// Grouped check: structurally orthogonal elements share one perturbation and each moved output
// is credited to the element whose band holds it (Curtis, Powell & Reid, "On the estimation of
// sparse Jacobian matrices", J. Inst. Math. Appl. 13 (1974) 117–119). An elementwise op's whole
// diagonal comes from one pair of forward calls, so a million elements are all checked.

import assert from 'node:assert/strict';
import { check, functionOp, show, spec } from './opBuilder';

function softsign(n: number, wrongAt: number | null) {
  return functionOp({
    forward: (x: Float64Array) => {
      const y = new Float64Array(x.length);
      for (let i = 0; i < x.length; i++) y[i] = x[i] / (1 + Math.abs(x[i]));
      return y;
    },
    backward: (x: Float64Array, dy: Float64Array) => {
      const g = new Float64Array(x.length);
      for (let i = 0; i < x.length; i++) {
        const d = 1 + Math.abs(x[i]);
        g[i] = dy[i] / (d * d);
      }
      if (wrongAt !== null) g[wrongAt] *= 1 + 1e-4;
      return g;
    },
    params: [['x', spec('f64', [n], [-3, 3], { avoid: [0] })]],
  });
}

/** 'valid' 1-D convolution of x with a fixed 5-tap kernel: a banded Jacobian. */
function conv(n: number, wrongAt: number | null) {
  const w = [0.2, -0.5, 1, 0.7, -0.3];
  const m = n - w.length + 1;
  return functionOp({
    forward: (x: Float64Array) => {
      const y = new Float64Array(m);
      for (let j = 0; j < m; j++) {
        let s = 0;
        for (let k = 0; k < w.length; k++) s += w[k] * Math.tanh(x[j + k]);
        y[j] = s;
      }
      return y;
    },
    backward: (x: Float64Array, dy: Float64Array) => {
      const g = new Float64Array(n);
      for (let j = 0; j < m; j++) for (let k = 0; k < w.length; k++) g[j + k] += w[k] * dy[j] * (1 - Math.tanh(x[j + k]) ** 2);
      if (wrongAt !== null) g[wrongAt] = -g[wrongAt];
      return g;
    },
    params: [['x', spec('f64', [n], [-2, 2])]],
  });
}

/**
 * Softmax over each row of `width` logits: a block-diagonal Jacobian, y_i(δ_ij − y_j) inside a
 * row (the softmax Jacobian, from memory), zero across rows. `wrongAt` scales one gradient entry.
 */
function rowSoftmax(rows: number, width: number, wrongAt: number | null) {
  return functionOp({
    forward: (z: Float64Array) => {
      const y = new Float64Array(z.length);
      for (let b = 0; b < z.length; b += width) {
        let sum = 0;
        for (let j = 0; j < width; j++) sum += y[b + j] = Math.exp(z[b + j]);
        for (let j = 0; j < width; j++) y[b + j] /= sum;
      }
      return y;
    },
    backward: (z: Float64Array, y: Float64Array, dy: Float64Array) => {
      const g = new Float64Array(z.length);
      for (let b = 0; b < z.length; b += width) {
        let dot = 0;
        for (let j = 0; j < width; j++) dot += dy[b + j] * y[b + j];
        for (let j = 0; j < width; j++) g[b + j] = y[b + j] * (dy[b + j] - dot);
      }
      if (wrongAt !== null) g[wrongAt] *= 1 + 1e-4;
      return g;
    },
    params: [['z', spec('f64', [rows, width], [-2, 2])]],
    backwardArgs: ['z', '$y', '$dy'],
  });
}

describe('engine: grouped check (Curtis, Powell & Reid 1974)', () => {
  it('1,000,000-element elementwise op: pass, every element checked, few forward calls', () => {
    const t0 = performance.now();
    const o = check(softsign(1_000_000, null));
    const ms = performance.now() - t0;
    assert.equal(o.verdict, 'pass', show(o));
    const p = o.params[0];
    assert.equal(p.method, 'grouped');
    assert.equal(p.elements, 1_000_000);
    assert.equal(p.checkedElements, 1_000_000);
    // 2 baseline, 1 joint structure probe, 2 for the one colour class, 2 for the dot-product probe.
    assert.ok(o.calls.forward <= 8, `forward calls ${o.calls.forward}`);
    console.log(`      1e6 elementwise pass: ${ms.toFixed(0)} ms in-process, ${o.calls.forward} forward and ${o.calls.backward} backward calls`);
  });

  it('1,000,000-element elementwise op with one element off by 1e-4: mismatch at that index', () => {
    const t0 = performance.now();
    const o = check(softsign(1_000_000, 654_321));
    const ms = performance.now() - t0;
    assert.equal(o.verdict, 'mismatch', show(o));
    assert.deepEqual(o.params[0].worst?.index, [654_321]);
    assert.ok(
      o.params[0].hints.some((h) => h.includes('wrong only at x[654321]')),
      show(o),
    );
    console.log(`      1e6 elementwise, one wrong element: ${ms.toFixed(0)} ms in-process, ${o.calls.forward} forward calls`);
  });

  it('a 33-element elementwise op learns its diagonal from one joint probe of 5 elements, 8 outputs apart', () => {
    const o = check(softsign(33, null), { stepScans: 'none' });
    assert.equal(o.verdict, 'pass', show(o));
    assert.equal(o.params[0].method, 'grouped');
    assert.equal(o.params[0].checkedElements, 33);
    // 2 baseline calls, 1 joint probe (6 probes would lie under 8 outputs apart, 5 do not), 2 for
    // the one colour class, 2 for the safety probe; eight single probes would make it 14.
    assert.equal(o.calls.forward, 2 + 1 + 2 + 2, show(o));
    const wrong = check(softsign(33, 17), { stepScans: 'none' });
    assert.equal(wrong.verdict, 'mismatch', show(wrong));
    assert.deepEqual(wrong.params[0].worst?.index, [17]);
  });

  it('banded op (valid 1-D convolution, 5 taps): a few colour classes instead of one column per element', () => {
    const o = check(conv(2000, null));
    assert.equal(o.verdict, 'pass', show(o));
    assert.equal(o.params[0].method, 'grouped');
    assert.equal(o.params[0].checkedElements, 2000);
    assert.ok(o.calls.forward < 60, `forward calls ${o.calls.forward} (a full check needs 4000)`);
  });

  it('banded op with a sign error at one element: mismatch at that element', () => {
    const o = check(conv(2000, 1234));
    assert.equal(o.verdict, 'mismatch', show(o));
    assert.deepEqual(o.params[0].worst?.index, [1234]);
  });

  it('y = W x: each column of W is one colour class', () => {
    const rows = 40;
    const cols = 30;
    const built = functionOp({
      forward: (W: Float64Array, x: Float64Array) => {
        const y = new Float64Array(rows);
        for (let r = 0; r < rows; r++) for (let c = 0; c < cols; c++) y[r] += W[r * cols + c] * x[c];
        return y;
      },
      backward: (W: Float64Array, x: Float64Array, dy: Float64Array) => {
        const dW = new Float64Array(rows * cols);
        const dx = new Float64Array(cols);
        for (let r = 0; r < rows; r++)
          for (let c = 0; c < cols; c++) {
            dW[r * cols + c] = dy[r] * x[c];
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
    assert.equal(o.verdict, 'pass', show(o));
    assert.equal(o.params[0].method, 'grouped');
    // A full check needs 2 forwards per element: 2·(1200 + 30) = 2460. Grouped: 30 pairs for W,
    // plus probes, x's 60 columns and a dot-product probe (no step picture: a passing op gets none by default).
    assert.ok(o.calls.forward < 250, `forward calls ${o.calls.forward}`);
  });

  it('a wrong structure guess costs calls, never a false alarm: a hidden coupling the probes missed', () => {
    // y_j = x_j² except y_500, which also depends on x_7: the band model is wrong for two elements.
    const n = 1000;
    const built = functionOp({
      forward: (x: Float64Array) => {
        const y = x.map((v) => v * v);
        y[500] += 3 * x[7];
        return y;
      },
      backward: (x: Float64Array, dy: Float64Array) => {
        const g = x.map((v, i) => 2 * v * dy[i]);
        g[7] += 3 * dy[500];
        return g;
      },
      params: [['x', spec('f64', [n])]],
    });
    const o = check(built);
    assert.equal(o.verdict, 'pass', show(o));
    assert.equal(o.params[0].checkedElements, n);
  });

  it("a softmax over rows of 10 uses 10 colour classes (one per column of the block), not the band model's 19", () => {
    const o = check(rowSoftmax(300, 10, null), { stepScans: 'none' });
    assert.equal(o.verdict, 'pass', show(o));
    assert.equal(o.params[0].method, 'grouped');
    assert.equal(o.params[0].checkedElements, 3000);
    // 2 baseline calls, 1 joint structure probe, 2 per colour class, 2 for the random-direction
    // safety probe: 25 with 10 classes; the band model's 19 classes would need 43.
    assert.equal(o.calls.forward, 2 + 1 + 2 * 10 + 2, show(o));
  });

  it('a softmax over 10 rows of 10 (blocks too wide for the joint probe) still gets 10 colour classes from the single probes', () => {
    const o = check(rowSoftmax(10, 10, null), { stepScans: 'none' });
    assert.equal(o.verdict, 'pass', show(o));
    assert.equal(o.params[0].method, 'grouped');
    assert.equal(o.params[0].checkedElements, 100);
    // 2 baseline calls, 1 joint probe (its blocks overlap, so it proves nothing), 8 single probes
    // (first, last, 4 spaced, 2 random), 2 per colour class, 2 for the safety probe: 33; the band
    // model's 19 classes would need 51.
    assert.equal(o.calls.forward, 2 + 1 + 8 + 2 * 10 + 2, show(o));
  });

  it('a softmax over 10 rows of 10 with one wrong entry is a mismatch at that entry', () => {
    const o = check(rowSoftmax(10, 10, 57), { stepScans: 'none' });
    assert.equal(o.verdict, 'mismatch', show(o));
    assert.deepEqual(o.params[0].worst?.index, [5, 7]);
  });

  it('a dense Jacobian seen by the single probes is not taken for one block of every element', () => {
    // y = A x with a dense 40×40 A: every element moves every output, a 'block' of 40 that
    // grouping could not save a single call on; the full check's 80 calls stand.
    const n = 40;
    const A = Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => Math.cos(i + 2 * j)));
    const o = check(
      functionOp({
        forward: (x: Float64Array) => Float64Array.from(A, (row) => row.reduce((s, a, j) => s + a * x[j], 0)),
        backward: (x: Float64Array, dy: Float64Array) => Float64Array.from(x, (_, j) => A.reduce((s, row, i) => s + row[j] * dy[i], 0)),
        params: [['x', spec('f64', [n])]],
      }),
      { stepScans: 'none' },
    );
    assert.equal(o.verdict, 'pass', show(o));
    assert.equal(o.params[0].method, 'full');
  });

  it('a softmax over rows of 10 with one wrong entry is a mismatch at that entry (block colouring)', () => {
    const o = check(rowSoftmax(300, 10, 1234), { stepScans: 'none' });
    assert.equal(o.verdict, 'mismatch', show(o));
    assert.deepEqual(o.params[0].worst?.index, [123, 4]);
  });

  it('a backward that misses a coupling the structure probes did not see is still a mismatch (a dot-product probe sends it back to probes split down to elements)', () => {
    // y_j = x_j² except y_500, which also depends on x_7 — and the backward forgets that term.
    const n = 1000;
    const built = functionOp({
      forward: (x: Float64Array) => {
        const y = x.map((v) => v * v);
        y[500] += 3 * x[7];
        return y;
      },
      backward: (x: Float64Array, dy: Float64Array) => x.map((v, i) => 2 * v * dy[i]),
      params: [['x', spec('f64', [n])]],
    });
    const o = check(built);
    assert.equal(o.verdict, 'mismatch', show(o));
    // 1,000 columns cost more than probing: the probes, split down to x[7], find it.
    assert.equal(o.params[0].method, 'dot-product');
    assert.deepEqual(o.params[0].worst?.index, [7]);
  });
});
