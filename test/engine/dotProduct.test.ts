// The adjoint dot-product identity ⟨u, A v⟩ = ⟨Aᵀu, v⟩ (Griewank & Walther, Evaluating
// Derivatives, 2nd ed., SIAM 2008, tangent/adjoint duality) on random linear maps y = A x: the
// engine's dot-product path must pass Aᵀ and reject A in its place.

import assert from 'node:assert/strict';
import fc from 'fast-check';
import { createRandom } from '../../server/src/engine/random';
import { check, functionOp, show, spec } from './opBuilder';

function randomMatrix(rows: number, cols: number, seed: number): Float64Array {
  const r = createRandom(seed);
  const a = new Float64Array(rows * cols);
  for (let i = 0; i < a.length; i++) a[i] = 2 * r() - 1;
  return a;
}

function linearMap(n: number, seed: number, useTransposeInBackward: boolean) {
  const A = randomMatrix(n, n, seed);
  return functionOp({
    forward: (x: Float64Array) => {
      const y = new Float64Array(n);
      for (let i = 0; i < n; i++) {
        let s = 0;
        for (let j = 0; j < n; j++) s += A[i * n + j] * x[j];
        y[i] = s;
      }
      return y;
    },
    backward: (_x: Float64Array, dy: Float64Array) => {
      const g = new Float64Array(n);
      for (let j = 0; j < n; j++) {
        let s = 0;
        // Correct: g = Aᵀ dy. The bug multiplies by A itself (a transposition forgotten).
        for (let i = 0; i < n; i++) s += (useTransposeInBackward ? A[i * n + j] : A[j * n + i]) * dy[i];
        g[j] = s;
      }
      return g;
    },
    params: [['x', spec('f64', [n], [-2, 2])]],
  });
}

// Small limits so a 200-element parameter takes the large-parameter path.
const large = { largeParamElements: 50, dotProductProbes: 4, subsetElements: 8 };

describe('engine: dot-product test on random linear maps (Griewank & Walther)', () => {
  for (const seed of [1, 2, 3]) {
    it(`y = A x with Aᵀ in the backward passes by the dot-product path (matrix seed ${seed})`, () => {
      const o = check(linearMap(200, seed, true), large);
      assert.equal(o.verdict, 'pass', show(o));
      assert.equal(o.params[0].method, 'dot-product');
      // No probe disagreed, so no element needed a look of its own.
      assert.equal(o.params[0].checkedElements, 0);
      assert.ok((o.params[0].detectionFloor ?? Infinity) < 1e-4, show(o));
      // K = 2 upstream probes; the 4 dot-product probes take those 2 and draw 2 more: one
      // backward per distinct upstream vector.
      assert.equal(o.calls.backward, 2 + (4 - 2));
    });

    it(`A in place of Aᵀ (non-symmetric) is a mismatch (matrix seed ${seed})`, () => {
      const o = check(linearMap(200, seed, false), large);
      assert.equal(o.verdict, 'mismatch', show(o));
      assert.equal(o.params[0].method, 'dot-product');
    });

    it(`the probes split down to an element whose own estimate disagrees when A replaces Aᵀ (matrix seed ${seed})`, () => {
      const o = check(linearMap(200, seed, false), { ...large, subsetElements: 0 });
      assert.equal(o.verdict, 'mismatch', show(o));
      // A probe discrepancy alone never makes the verdict: the message names one element.
      assert.match(o.message, /disagrees at x\[\d+\]: backward/);
      const ok = check(linearMap(200, seed, true), { ...large, subsetElements: 0 });
      assert.equal(ok.verdict, 'pass', show(ok));
    });
  }

  // The probes take the K upstream vectors first and draw only the rest: one backward call per
  // distinct vector, and the adjoint identity still rejects A in place of Aᵀ whichever way the
  // vectors are shared (fewer probe vectors than K, or more).
  for (const [upstreamProbes, dotProductProbes, backwardCalls] of [
    [2, 1, 2],
    [1, 4, 4],
    [3, 3, 3],
  ]) {
    it(`K = ${upstreamProbes} upstream vectors and ${dotProductProbes} for the probes: ${backwardCalls} backward calls, Aᵀ passes and A fails`, () => {
      const settings = { ...large, upstreamProbes, dotProductProbes };
      const ok = check(linearMap(200, 7, true), settings);
      assert.equal(ok.verdict, 'pass', show(ok));
      assert.equal(ok.params[0].method, 'dot-product');
      assert.equal(ok.calls.backward, backwardCalls, show(ok));
      const bad = check(linearMap(200, 7, false), settings);
      assert.equal(bad.verdict, 'mismatch', show(bad));
      assert.equal(bad.calls.backward, backwardCalls, show(bad));
    });
  }

  it('small linear maps get full columns', () => {
    const o = check(linearMap(6, 4, false));
    assert.equal(o.verdict, 'mismatch', show(o));
    assert.equal(o.params[0].method, 'full');
    assert.equal(o.params[0].checkedElements, 6);
  });

  it('property (fast-check): for random shapes, maps and seeds, Aᵀ passes and one entry of Aᵀ off by 1e-3 is a mismatch at that entry', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 30 }), // outputs
        fc.integer({ min: 1, max: 30 }), // inputs
        fc.integer({ min: 1, max: 1e6 }), // matrix seed
        fc.integer({ min: 0, max: 2 ** 31 - 1 }), // check seed
        fc.nat(), // which input gets the wrong gradient (mod n)
        (m, n, matrixSeed, seed, pick) => {
          const A = randomMatrix(m, n, matrixSeed);
          const wrong = pick % n;
          const op = (bug: boolean) =>
            functionOp({
              forward: (x: Float64Array) => {
                const y = new Float64Array(m);
                for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) y[i] += A[i * n + j] * x[j];
                return y;
              },
              backward: (_x: Float64Array, dy: Float64Array) => {
                const g = new Float64Array(n);
                for (let j = 0; j < n; j++) for (let i = 0; i < m; i++) g[j] += A[i * n + j] * dy[i];
                if (bug) g[wrong] *= 1 + 1e-3;
                return g;
              },
              params: [['x', spec('f64', [n], [-3, 3])]],
              seed,
            });
          const ok = check(op(false));
          assert.equal(ok.verdict, 'pass', show(ok));
          const bad = check(op(true));
          // A column of A that is zero would hide the bug; random entries are never all zero.
          assert.equal(bad.verdict, 'mismatch', show(bad));
          assert.deepEqual(bad.params[0].worst?.index, [wrong]);
        },
      ),
      { numRuns: 40, seed: 424242 },
    );
  });
});
