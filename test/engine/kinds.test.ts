// The derivative kinds @jacobian, @tangent and @hessian in the engine, in process, against
// published worked examples and hand-derived matrices: correct functions pass; seeded bugs (one
// wrong entry, a transposed Jacobian, a non-symmetric Hessian, a tangent with a term missing)
// are mismatches located at the entry or output; kinks are never a mismatch; bad shapes are
// clear errors.

import assert from 'node:assert/strict';
import { DEFAULT_SETTINGS } from '../../server/src/engine/settings';
import type { BackwardArg, OpDescriptor, OpKind } from '../../server/src/model/types';
import { check, functionOp, methodOp, show, spec } from './opBuilder';

type Fn = (...args: any[]) => any;

/** A function op of a derivative kind: `fn` is the @jacobian/@tangent/@hessian function. */
function kindOp(
  kind: OpKind,
  forward: Fn,
  fn: Fn,
  params: [string, ReturnType<typeof spec>][],
  args: BackwardArg[],
  gradient?: { fn: Fn; args: BackwardArg[] },
): { exposed: Record<string, unknown>; op: OpDescriptor } {
  const built = functionOp({ forward, backward: fn, params });
  built.op.kind = kind;
  built.op.backwardArgs = args;
  if (gradient) {
    built.exposed.opGradient = gradient.fn;
    built.op.gradient = { name: 'opGradient', backwardName: 'opGradient', backwardIsMethod: false, args: gradient.args };
  }
  return built;
}

const p = (name: string): BackwardArg => ({ kind: 'param', name });
const d = (name: string): BackwardArg => ({ kind: 'tangent', name });
const V: BackwardArg = { kind: 'vector' };

// A two-link planar arm (our own example): joint angles q → hand position (x, y).
const L1 = 1.3;
const L2 = 0.8;
const reach = (q: Float64Array): Float64Array => Float64Array.of(L1 * Math.cos(q[0]) + L2 * Math.cos(q[0] + q[1]), L1 * Math.sin(q[0]) + L2 * Math.sin(q[0] + q[1]));
const reachJacobian = (q: Float64Array): number[][] => [
  [-L1 * Math.sin(q[0]) - L2 * Math.sin(q[0] + q[1]), -L2 * Math.sin(q[0] + q[1])],
  [L1 * Math.cos(q[0]) + L2 * Math.cos(q[0] + q[1]), L2 * Math.cos(q[0] + q[1])],
];

// Rosenbrock f(x, y) = 100(y − x²)² + (1 − x)², gradient and Hessian (Nocedal & Wright,
// Numerical Optimization, 2nd ed., ch. 2: at (1, 1) the Hessian is [[802, −400], [−400, 200]]).
const rosen = (v: Float64Array): number => 100 * (v[1] - v[0] ** 2) ** 2 + (1 - v[0]) ** 2;
const rosenGrad = (v: Float64Array): Float64Array => Float64Array.of(-400 * v[0] * (v[1] - v[0] ** 2) - 2 * (1 - v[0]), 200 * (v[1] - v[0] ** 2));
const rosenHess = (v: Float64Array): number[][] => [
  [1200 * v[0] ** 2 - 400 * v[1] + 2, -400 * v[0]],
  [-400 * v[0], 200],
];

describe('engine: @jacobian', () => {
  it('passes a correct Jacobian (number[][]) and a flat row-major Float64Array', () => {
    const o1 = check(kindOp('jacobian', reach, reachJacobian, [['q', spec('f64', [2], [-3, 3])]], [p('q')]));
    assert.equal(o1.verdict, 'pass', show(o1));
    const flat = (q: Float64Array): Float64Array => Float64Array.from(reachJacobian(q).flat());
    const o2 = check(kindOp('jacobian', reach, flat, [['q', spec('f64', [2], [-3, 3])]], [p('q')]));
    assert.equal(o2.verdict, 'pass', show(o2));
    // Every entry was compared on its own, so the pass states the tolerance as its detection floor.
    assert.equal(o1.params[0].checkedElements, o1.params[0].elements, show(o1));
    assert.equal(o1.params[0].detectionFloor, DEFAULT_SETTINGS.toleranceF64, show(o1));
  });

  it('names one wrong entry as J[out, element] with both values', () => {
    const wrong = (q: Float64Array): number[][] => {
      const J = reachJacobian(q);
      J[1][0] = L1 * Math.cos(q[0]); // BUG: forgets the second link's term
      return J;
    };
    const o = check(kindOp('jacobian', reach, wrong, [['q', spec('f64', [2], [-3, 3])]], [p('q')]));
    assert.equal(o.verdict, 'mismatch', show(o));
    assert.match(o.message, /J\[1, 0\] \(output 1, q\[0\]\): jacobian gives/, show(o));
    assert.ok(
      o.params[0].hints.some((h) => /only J\[1, 0\] is wrong/.test(h)),
      show(o),
    );
    // One rule for the worst element (model/types.ts WorstElement): the entry the message names,
    // with the relative error the message shows.
    const worst = o.params[0].worst;
    assert.ok(worst && worst.relError !== undefined, show(o));
    assert.deepEqual(worst.index, [0], show(o));
    assert.ok(o.message.includes(`(relative error ${Number(worst.relError.toPrecision(3))})`), show(o));
  });

  it('catches a transposed square Jacobian and says so', () => {
    // A 3×3 map whose Jacobian is far from symmetric: y_i = Σ_j A_ij sin(x_j).
    const A = [
      [1, 2, 0],
      [0, 1, 3],
      [4, 0, 1],
    ];
    const fwd = (x: Float64Array): Float64Array => Float64Array.from(A.map((row) => row.reduce((s, a, j) => s + a * Math.sin(x[j]), 0)));
    const jac = (x: Float64Array): number[][] => A.map((row) => row.map((a, j) => a * Math.cos(x[j])));
    const transposed = (x: Float64Array): number[][] => jac(x)[0].map((_, j) => jac(x).map((row) => row[j]));
    const good = check(kindOp('jacobian', fwd, jac, [['x', spec('f64', [3])]], [p('x')]));
    assert.equal(good.verdict, 'pass', show(good));
    const o = check(kindOp('jacobian', fwd, transposed, [['x', spec('f64', [3])]], [p('x')]));
    assert.equal(o.verdict, 'mismatch', show(o));
    assert.ok(
      o.params[0].hints.some((h) => /looks transposed/.test(h)),
      show(o),
    );
  });

  it('several parameters: an array or an object of matrices; a wrong sign in one is located', () => {
    // y = (a·b0, a + b1²): J_a is 2×1, J_b is 2×2.
    const fwd = (a: number, b: Float64Array): Float64Array => Float64Array.of(a * b[0], a + b[1] * b[1]);
    const ja = (_a: number, b: Float64Array): number[][] => [[b[0]], [1]];
    const jb = (a: number, b: Float64Array): number[][] => [
      [a, 0],
      [0, 2 * b[1]],
    ];
    const params: [string, ReturnType<typeof spec>][] = [
      ['a', spec('num')],
      ['b', spec('f64', [2])],
    ];
    const asArray = check(kindOp('jacobian', fwd, (a: number, b: Float64Array) => [ja(a, b), jb(a, b)], params, [p('a'), p('b')]));
    assert.equal(asArray.verdict, 'pass', show(asArray));
    const asObject = check(kindOp('jacobian', fwd, (a: number, b: Float64Array) => ({ b: jb(a, b), a: ja(a, b) }), params, [p('a'), p('b')]));
    assert.equal(asObject.verdict, 'pass', show(asObject));
    const wrong = check(
      kindOp(
        'jacobian',
        fwd,
        (a: number, b: Float64Array) => [
          ja(a, b),
          [
            [a, 0],
            [0, -2 * b[1]],
          ],
        ],
        params,
        [p('a'), p('b')],
      ),
    );
    assert.equal(wrong.verdict, 'mismatch', show(wrong));
    assert.equal(wrong.params[0].verdict, 'pass');
    assert.equal(wrong.params[1].verdict, 'mismatch');
    assert.match(wrong.message, /J_b\[1, 1\] \(output 1, b\[1\]\)/, show(wrong));
  });

  it('bad shapes are clear errors naming both shapes (and a transposed shape)', () => {
    // 2 outputs, 3 parameter elements: a 3×2 matrix is the transpose.
    const fwd = (x: Float64Array): Float64Array => Float64Array.of(x[0] * x[1], x[2]);
    const o = check(
      kindOp(
        'jacobian',
        fwd,
        () => [
          [1, 0],
          [0, 0],
          [0, 1],
        ],
        [['x', spec('f64', [3])]],
        [p('x')],
      ),
    );
    assert.equal(o.verdict, 'error', show(o));
    assert.match(o.message, /has shape \[3, 2\], expected \[2, 3\].*looks transposed/, show(o));
    const o2 = check(kindOp('jacobian', fwd, () => new Float64Array(5), [['x', spec('f64', [3])]], [p('x')]));
    assert.equal(o2.verdict, 'error');
    assert.match(o2.message, /has 5 elements, expected a 2×3 \(2 outputs × 3 elements/);
    const o3 = check(kindOp('jacobian', fwd, () => 'J', [['x', spec('f64', [3])]], [p('x')]));
    assert.equal(o3.verdict, 'error');
  });

  it('a kink (ReLU sampled on its corner) is never a mismatch', () => {
    // Every element drawn exactly at 0, where relu has a corner; the Jacobian gives a valid subgradient.
    const fwd = (x: Float64Array): Float64Array => x.map((v) => Math.max(0, v));
    const jac = (x: Float64Array): number[][] => Array.from(x, (_, i) => Array.from(x, (v, j) => (i === j && v > 0 ? 1 : 0)));
    const o = check(kindOp('jacobian', fwd, jac, [['x', spec('f64', [3], [0, 0])]], [p('x')]));
    assert.notEqual(o.verdict, 'mismatch', show(o));
  });
});

describe('engine: @tangent', () => {
  // Forward-mode J·t of the arm: J(q)·dq.
  const reachTangent = (q: Float64Array, dq: Float64Array): Float64Array => {
    const J = reachJacobian(q);
    return Float64Array.of(J[0][0] * dq[0] + J[0][1] * dq[1], J[1][0] * dq[0] + J[1][1] * dq[1]);
  };

  it('passes a correct tangent', () => {
    const o = check(kindOp('tangent', reach, reachTangent, [['q', spec('f64', [2], [-3, 3])]], [p('q'), d('q')]));
    assert.equal(o.verdict, 'pass', show(o));
    assert.equal(o.params[0].method, 'directional');
  });

  it('names the output that disagrees when a term is missing', () => {
    const wrong = (q: Float64Array, dq: Float64Array): Float64Array => {
      const t = reachTangent(q, dq);
      t[1] -= L2 * Math.cos(q[0] + q[1]) * dq[1]; // BUG: the second joint's term is missing in y
      return t;
    };
    const o = check(kindOp('tangent', reach, wrong, [['q', spec('f64', [2], [-3, 3])]], [p('q'), d('q')]));
    assert.equal(o.verdict, 'mismatch', show(o));
    assert.match(o.message, /disagrees at output 1: tangent gives/, show(o));
  });

  it('several parameters: a missing term of one parameter is blamed on it', () => {
    // y = a·sin(b) (elementwise, b of 3): ẏ = ȧ·sin(b) + a·cos(b)·ḃ.
    const fwd = (a: number, b: Float64Array): Float64Array => b.map((v) => a * Math.sin(v));
    const good = (a: number, b: Float64Array, da: number, db: Float64Array): Float64Array => b.map((v, i) => da * Math.sin(v) + a * Math.cos(v) * db[i]);
    const params: [string, ReturnType<typeof spec>][] = [
      ['a', spec('num')],
      ['b', spec('f64', [3])],
    ];
    const args = [p('a'), p('b'), d('a'), d('b')];
    const ok = check(kindOp('tangent', fwd, good, params, args));
    assert.equal(ok.verdict, 'pass', show(ok));
    // BUG: the ḃ term is missing.
    const o = check(kindOp('tangent', fwd, (_a: number, b: Float64Array, da: number) => b.map((v) => da * Math.sin(v)), params, args));
    assert.equal(o.verdict, 'mismatch', show(o));
    assert.equal(o.params[0].verdict, 'pass', show(o));
    assert.equal(o.params[1].verdict, 'mismatch', show(o));
    assert.ok(
      o.params[1].hints.some((h) => /term of 'b' looks missing/.test(h)),
      show(o),
    );
  });

  it('a result of the wrong shape is a clear error', () => {
    const o = check(kindOp('tangent', reach, () => Float64Array.of(1, 2, 3), [['q', spec('f64', [2])]], [p('q'), d('q')]));
    assert.equal(o.verdict, 'error', show(o));
    assert.match(o.message, /tangent 'opBackward' returned .*expected J·t/, show(o));
  });

  it('a kink along the tangent is never a mismatch', () => {
    const fwd = (x: Float64Array): Float64Array => x.map((v) => Math.abs(v));
    const tan = (x: Float64Array, dx: Float64Array): Float64Array => x.map((v, i) => Math.sign(v) * dx[i]);
    const o = check(kindOp('tangent', fwd, tan, [['x', spec('f64', [3], [0, 0])]], [p('x'), d('x')]));
    assert.notEqual(o.verdict, 'mismatch', show(o));
  });
});

describe('engine: @hessian', () => {
  it('Rosenbrock at (1, 1): the textbook Hessian [[802, −400], [−400, 200]] passes (both references)', () => {
    // Nocedal & Wright, Numerical Optimization, 2nd ed., ch. 2 (worked example).
    const textbook = (): number[][] => [
      [802, -400],
      [-400, 200],
    ];
    const params: [string, ReturnType<typeof spec>][] = [['v', spec('f64', [2], [1, 1])]];
    const second = check(kindOp('hessian', rosen, textbook, params, [p('v')]));
    assert.equal(second.verdict, 'pass', show(second));
    assert.equal(second.params[0].method, 'second-differences');
    assert.match(second.message, /second differences of the forward/);
    // At the minimum the gradient is exactly 0, where its own check cannot settle a relative
    // error: the Hessian falls back to second differences and says why.
    const atMinimum = check(kindOp('hessian', rosen, textbook, params, [p('v')], { fn: rosenGrad, args: [p('v')] }));
    assert.equal(atMinimum.verdict, 'pass', show(atMinimum));
    assert.match(atMinimum.message, /reference: (central differences of the @backward 'opGradient', which passes|second differences of the forward .*did not pass)/);
    // Away from the minimum the gradient passes its own check and is the reference.
    const away = check(kindOp('hessian', rosen, rosenHess, [['v', spec('f64', [2], [-1.5, 1.5])]], [p('v')], { fn: rosenGrad, args: [p('v')] }));
    assert.equal(away.verdict, 'pass', show(away));
    assert.equal(away.params[0].method, 'gradient-differences', show(away));
    assert.match(away.message, /central differences of the @backward 'opGradient', which passes/);
    // One wrong textbook entry (−400 read as −40) is caught and placed.
    const typo = check(
      kindOp(
        'hessian',
        rosen,
        () => [
          [802, -40],
          [-400, 200],
        ],
        params,
        [p('v')],
      ),
    );
    assert.equal(typo.verdict, 'mismatch', show(typo));
    assert.match(typo.message, /H\[0, 1\] \(v\[0\], v\[1\]\)/, show(typo));
    assert.ok(
      typo.params[0].hints.some((h) => /not symmetric/.test(h)),
      show(typo),
    );
  });

  it('random points: correct Hessian passes; a non-symmetric one is caught with either reference', () => {
    const params: [string, ReturnType<typeof spec>][] = [['v', spec('f64', [2], [-2, 2])]];
    const asym = (v: Float64Array): number[][] => {
      const H = rosenHess(v);
      H[1][0] = -400 * v[0] + 1; // BUG: the lower mixed entry is off by one
      return H;
    };
    for (const gradient of [undefined, { fn: rosenGrad, args: [p('v')] }]) {
      const ok = check(kindOp('hessian', rosen, rosenHess, params, [p('v')], gradient));
      assert.equal(ok.verdict, 'pass', show(ok));
      const bad = check(kindOp('hessian', rosen, asym, params, [p('v')], gradient));
      assert.equal(bad.verdict, 'mismatch', show(bad));
      assert.match(bad.message, /H\[1, 0\]/, show(bad));
    }
  });

  it('a wrong @backward is not used as the reference', () => {
    const params: [string, ReturnType<typeof spec>][] = [['v', spec('f64', [2], [-2, 2])]];
    const wrongGrad = (v: Float64Array): Float64Array => Float64Array.of(rosenGrad(v)[0] * 2, rosenGrad(v)[1]);
    const o = check(kindOp('hessian', rosen, rosenHess, params, [p('v')], { fn: wrongGrad, args: [p('v')] }));
    assert.equal(o.verdict, 'pass', show(o));
    assert.match(o.message, /because the @backward 'opGradient' did not pass \(mismatch\)/, show(o));
  });

  it('Hessian-vector products ($v): correct passes, a wrong diagonal is caught, with either reference', () => {
    const params: [string, ReturnType<typeof spec>][] = [['v', spec('f64', [2], [-2, 2])]];
    const hvp = (x: Float64Array, w: Float64Array): Float64Array => {
      const H = rosenHess(x);
      return Float64Array.of(H[0][0] * w[0] + H[0][1] * w[1], H[1][0] * w[0] + H[1][1] * w[1]);
    };
    const wrong = (x: Float64Array, w: Float64Array): Float64Array => {
      const r = hvp(x, w);
      r[1] += 20 * w[1]; // BUG: H[1][1] taken as 220
      return r;
    };
    for (const gradient of [undefined, { fn: rosenGrad, args: [p('v')] }]) {
      const ok = check(kindOp('hessian', rosen, hvp, params, [p('v'), V], gradient));
      assert.equal(ok.verdict, 'pass', show(ok));
      const bad = check(kindOp('hessian', rosen, wrong, params, [p('v'), V], gradient));
      assert.equal(bad.verdict, 'mismatch', show(bad));
      assert.match(bad.message, /H·v for a v of 'v' disagrees at v\[1\]/, show(bad));
    }
  });

  it('several parameters form one vector: H is (n_a + n_b)²', () => {
    // f(a, b) = a²·b0 + sin(b1)·a: parameters a (scalar) and b (2) → 3×3 Hessian.
    const f = (a: number, b: Float64Array): number => a * a * b[0] + Math.sin(b[1]) * a;
    const H = (a: number, b: Float64Array): number[][] => [
      [2 * b[0], 2 * a, Math.cos(b[1])],
      [2 * a, 0, 0],
      [Math.cos(b[1]), 0, -Math.sin(b[1]) * a],
    ];
    const params: [string, ReturnType<typeof spec>][] = [
      ['a', spec('num')],
      ['b', spec('f64', [2])],
    ];
    const o = check(kindOp('hessian', f, H, params, [p('a'), p('b')]));
    assert.equal(o.verdict, 'pass', show(o));
    const bad = check(
      kindOp(
        'hessian',
        f,
        (a: number, b: Float64Array) => {
          const m = H(a, b);
          m[2][2] = Math.sin(b[1]) * a;
          return m;
        },
        params,
        [p('a'), p('b')],
      ),
    );
    assert.equal(bad.verdict, 'mismatch', show(bad));
    assert.match(bad.message, /H\[2, 2\] \(b\[1\], b\[1\]\)/, show(bad));
  });

  it('Hessian-vector products over several parameters: $v and the result have one part per parameter', () => {
    // f(a, b) = a²·b0 + sin(b1)·a, as above: H·v split as [(H·v)_a, (H·v)_b].
    const f = (a: number, b: Float64Array): number => a * a * b[0] + Math.sin(b[1]) * a;
    const hvp = (a: number, b: Float64Array, v: [number, Float64Array]): [number, Float64Array] => {
      const [va, vb] = v;
      return [2 * b[0] * va + 2 * a * vb[0] + Math.cos(b[1]) * vb[1], Float64Array.of(2 * a * va, Math.cos(b[1]) * va - Math.sin(b[1]) * a * vb[1])];
    };
    const params: [string, ReturnType<typeof spec>][] = [
      ['a', spec('num')],
      ['b', spec('f64', [2])],
    ];
    const o = check(kindOp('hessian', f, hvp, params, [p('a'), p('b'), V]));
    assert.equal(o.verdict, 'pass', show(o));
    const wrong = (a: number, b: Float64Array, v: [number, Float64Array]): { a: number; b: Float64Array } => {
      const [ha, hb] = hvp(a, b, v);
      return { a: ha, b: Float64Array.of(hb[0]!, hb[1]! + Math.sin(b[1]) * a * v[1][1]! * 2) }; // BUG: sign of the b1 curvature
    };
    const bad = check(kindOp('hessian', f, wrong, params, [p('a'), p('b'), V]));
    assert.equal(bad.verdict, 'mismatch', show(bad));
    assert.match(bad.message, /H·v for a v of 'b' disagrees at b\[1\]/, show(bad));
  });

  it('bad shapes and a vector forward are clear errors', () => {
    const params: [string, ReturnType<typeof spec>][] = [['v', spec('f64', [2])]];
    const o = check(kindOp('hessian', rosen, () => [[1, 2, 3]], params, [p('v')]));
    assert.equal(o.verdict, 'error', show(o));
    assert.match(o.message, /has shape \[1, 3\], expected \[2, 2\]/);
    const vec = check(
      kindOp(
        'hessian',
        reach,
        () => [
          [1, 0],
          [0, 1],
        ],
        [['q', spec('f64', [2])]],
        [p('q')],
      ),
    );
    assert.equal(vec.verdict, 'error');
    assert.match(vec.message, /@hessian needs a forward that returns a number; it returned 2 values/);
  });

  it('a kink in the gradient is never a mismatch', () => {
    // f = Σ max(0, x)²: smooth gradient 2·max(0, x), Hessian jumps at 0; sampled exactly there.
    const f = (x: Float64Array): number => x.reduce((s, v) => s + Math.max(0, v) ** 2, 0);
    const H = (x: Float64Array): number[][] => Array.from(x, (v, i) => Array.from(x, (_, j) => (i === j && v > 0 ? 2 : 0)));
    const o = check(kindOp('hessian', f, H, [['x', spec('f64', [2], [0, 0])]], [p('x')]));
    assert.notEqual(o.verdict, 'mismatch', show(o));
    const g = (x: Float64Array): Float64Array => x.map((v) => 2 * Math.max(0, v));
    const o2 = check(kindOp('hessian', f, H, [['x', spec('f64', [2], [0, 0])]], [p('x')], { fn: g, args: [p('x')] }));
    assert.notEqual(o2.verdict, 'mismatch', show(o2));
  });
});

describe('engine: derivative kinds on methods', () => {
  // A layer that caches its input in the forward (as stateful code does) and whose tangent and
  // Jacobian read that cache: y = w ⊙ tanh(x) with the weight a field.
  class Squash {
    w = new Float64Array(3);
    private cached = new Float64Array(3);
    forward(x: Float64Array): Float64Array {
      this.cached = x.map(Math.tanh);
      return this.cached.map((t, i) => this.w[i]! * t);
    }
    jacobian(x: Float64Array): number[][] {
      return Array.from(x, (_, i) => Array.from(x, (_v, j) => (i === j ? this.w[i]! * (1 - this.cached[i]! ** 2) : 0)));
    }
    tangent(_x: Float64Array, dx: Float64Array, dw: Float64Array): Float64Array {
      return this.cached.map((t, i) => this.w[i]! * (1 - t * t) * dx[i]! + dw[i]! * t);
    }
  }
  const build = (kind: OpKind, name: string, args: BackwardArg[]) => {
    const built = methodOp({
      cls: Squash,
      forwardName: 'forward',
      backwardName: name,
      params: [
        ['x', spec('f64', [3])],
        ['this.w', spec('f64', [3], [0.5, 2])],
      ],
    });
    built.op.kind = kind;
    built.op.backwardArgs = args;
    return built;
  };

  it('a method Jacobian (x only; the field fixed by its spec) and a method tangent over x and this.w pass', () => {
    const jac = build('jacobian', 'jacobian', [p('x')]);
    jac.op.params[1]!.sample = spec('f64', [3], [0.5, 2], { fixed: true });
    const o = check(jac);
    assert.equal(o.verdict, 'pass', show(o));
    const tan = check(build('tangent', 'tangent', [p('x'), d('x'), d('this.w')]));
    assert.equal(tan.verdict, 'pass', show(tan));
    assert.deepEqual(
      tan.params.map((q) => q.name),
      ['x', 'this.w'],
    );
  });
});

describe('engine: derivative kinds, seeds and failures', () => {
  const params = (): [string, ReturnType<typeof spec>][] => [['q', spec('f64', [2], [-3, 3])]];

  it('the same seed gives the same outcome; another seed draws other inputs', () => {
    const run = (seed: number) => check(kindOp('jacobian', reach, reachJacobian, params(), [p('q')]), { seed });
    const a = run(7);
    const b = run(7);
    const c = run(8);
    assert.deepEqual(a.inputs, b.inputs);
    assert.deepEqual(a.params, b.params);
    assert.notDeepEqual(a.inputs, c.inputs);
    assert.equal(c.verdict, 'pass', show(c));
  });

  it('a derivative function that throws, or returns NaN, is an error naming it', () => {
    const thrown = check(
      kindOp(
        'tangent',
        reach,
        () => {
          throw new Error('no tangent here');
        },
        params(),
        [p('q'), d('q')],
      ),
    );
    assert.equal(thrown.verdict, 'error');
    assert.match(thrown.message, /tangent threw: .*no tangent here/);
    const nan = check(
      kindOp(
        'jacobian',
        reach,
        () => [
          [NaN, 0],
          [0, 1],
        ],
        params(),
        [p('q')],
      ),
    );
    assert.equal(nan.verdict, 'error');
    assert.match(nan.message, /jacobian 'opBackward' result has NaN at \[0, 0\]/);
    const missing = kindOp('hessian', rosen, rosenHess, [['v', spec('f64', [2])]], [p('v')]);
    delete missing.exposed.opBackward;
    const o = check(missing);
    assert.equal(o.verdict, 'error');
    assert.match(o.message, /hessian 'opBackward' is not a function/);
  });

  it('a result whose reading throws (a getter of user code) is an error naming the function', () => {
    const trap = (): unknown => {
      const row = [1, 0];
      Object.defineProperty(row, 0, {
        get() {
          throw new Error('trap');
        },
      });
      return [row, [0, 1]];
    };
    const o = check(kindOp('jacobian', reach, trap, params(), [p('q')]));
    assert.equal(o.verdict, 'error', show(o));
    assert.match(o.message, /reading what jacobian 'opBackward' returned threw .*trap/);
  });

  it('a derivative function that changes its input is an error', () => {
    const o = check(
      kindOp(
        'jacobian',
        reach,
        (q: Float64Array) => {
          q[0] += 1;
          return reachJacobian(q);
        },
        params(),
        [p('q')],
      ),
    );
    assert.equal(o.verdict, 'error');
    assert.match(o.message, /jacobian 'opBackward' changed its input 'q' at \[0\]/);
  });
});

describe('engine: derivative kinds in float32', () => {
  // y = tanh(x) in float32 (elementwise): J = diag(1 − y²); tolerances follow float32 (u = 2^-24, IEEE 754).
  const fwd = (x: Float32Array): Float32Array => x.map(Math.tanh);
  const jac = (x: Float32Array): number[][] => Array.from(x, (v, i) => Array.from(x, (_w, j) => (i === j ? 1 - Math.tanh(v) ** 2 : 0)));
  const tan = (x: Float32Array, dx: Float32Array): Float32Array => x.map((v, i) => (1 - Math.tanh(v) ** 2) * dx[i]!);
  const params = (): [string, ReturnType<typeof spec>][] => [['x', spec('f32', [4], [-2, 2])]];

  it('correct float32 Jacobian and tangent pass; 2 % off on the diagonal is caught', () => {
    const j = check(kindOp('jacobian', fwd, jac, params(), [p('x')]));
    assert.equal(j.verdict, 'pass', show(j));
    const t = check(kindOp('tangent', fwd, tan, params(), [p('x'), d('x')]));
    assert.equal(t.verdict, 'pass', show(t));
    const bad = check(kindOp('jacobian', fwd, (x: Float32Array) => jac(x).map((row) => row.map((v) => v * 1.02)), params(), [p('x')]));
    assert.equal(bad.verdict, 'mismatch', show(bad));
    const badT = check(kindOp('tangent', fwd, (x: Float32Array, dx: Float32Array) => tan(x, dx).map((v) => v * 1.02), params(), [p('x'), d('x')]));
    assert.equal(badT.verdict, 'mismatch', show(badT));
  });
});
