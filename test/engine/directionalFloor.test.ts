// The detection floor of directional checks (@tangent's J·t, @hessian's H·v), against mathjs
// `derivative` (npm registry, symbolic differentiation) as the oracle: the exact Jacobian and
// Hessian of our own expressions pass and state a floor; every single entry made wrong by a
// little more than the floor promises (1.2 × floor × the root mean square of its row's scaled
// entries, the size the floor speaks of) is a mismatch for every seed tried. The floor's
// derivation is in server/src/engine/directionalFloor.ts and docs/derivatives.md.

import assert from 'node:assert/strict';
import { derivative, parse, type EvalFunction } from 'mathjs';
import { directionalFloor } from '../../server/src/engine/directionalFloor';
import { DEFAULT_SETTINGS } from '../../server/src/engine/settings';
import type { BackwardArg, CheckOutcome } from '../../server/src/model/types';
import { check, functionOp, show } from './opBuilder';

const VARS = ['x0', 'x1', 'x2', 'x3', 'x4', 'x5'];
const scope = (v: ArrayLike<number>): Record<string, number> => Object.fromEntries(VARS.map((name, k) => [name, v[k]]));
const compile = (text: string): EvalFunction => parse(text).compile();
const d = (text: string, name: string): string => derivative(parse(text), name, { simplify: false }).toString();
const value = (f: EvalFunction, v: ArrayLike<number>): number => f.evaluate(scope(v)) as number;

/** The sample point (the same for every seed: only the directions change with the seed). */
const POINT = [0.6, -1.7, 0.9, 1.4, -0.3, 2.2];
/** Scale of element k along a direction: v_k = d_k·max(1, |x_k|) (engine/lines.ts, directionLine). */
const SCALE = POINT.map((x) => Math.max(1, Math.abs(x)));
const SEEDS = [1, 2, 3, 4, 5, 6, 7, 8];
const P: BackwardArg = { kind: 'param', name: 'x' };

/** Root mean square of a row's entries scaled as the directions are: R in the floor's statement. */
function scaledRms(row: number[]): number {
  let s = 0;
  for (let k = 0; k < row.length; k++) s += (row[k] * SCALE[k]) ** 2;
  return Math.sqrt(s / row.length);
}

/** The error of entry (i, j) that the floor promises to catch, with 20% to spare. */
function promisedError(floor: number, row: number[], j: number): number {
  return (1.2 * floor * scaledRms(row)) / SCALE[j];
}

function expectFloor(o: CheckOutcome, n: number): number {
  const floor = o.params[0].detectionFloor;
  assert.equal(typeof floor, 'number', show(o));
  assert.ok((floor as number) >= DEFAULT_SETTINGS.toleranceF64, show(o));
  // The engine's figure is the one documented for n elements and the default two directions.
  assert.equal(floor, directionalFloor(n, DEFAULT_SETTINGS.upstreamProbes, DEFAULT_SETTINGS.toleranceF64));
  return floor as number;
}

describe('engine: detection floor of @tangent (J·t), against a mathjs Jacobian', () => {
  // Our own map R⁶ → R³ (no data from elsewhere).
  const outputs = [
    'tanh(0.7 * x0 - 0.4 * x1 + 0.9 * x2 + 0.3 * x3 - 0.8 * x4 + 0.5 * x5)',
    'x0 * x1 + sin(x2) - x3^2 / 3 + exp(x4 / 4) + log(x5^2 + 1)',
    'cos(x0 + x5) * (1 + x1^2 / 4) + x2 * x3 * x4 / 3',
  ];
  const fs = outputs.map(compile);
  const J = outputs.map((text) => VARS.map((name) => compile(d(text, name))));
  const forward = (x: Float64Array): Float64Array => Float64Array.from(fs.map((f) => value(f, x)));
  const exact = (x: Float64Array): number[][] => J.map((row) => row.map((f) => value(f, x)));
  const tangentOp = (matrix: (x: Float64Array) => number[][]) => {
    const built = functionOp({
      forward,
      backward: (x: Float64Array, dx: Float64Array) => Float64Array.from(matrix(x).map((row) => row.reduce((s, a, k) => s + a * dx[k], 0))),
      params: [['x', undefined]],
      samples: () => [Float64Array.from(POINT)],
    });
    built.op.kind = 'tangent';
    built.op.backwardArgs = [P, { kind: 'tangent', name: 'x' }];
    return built;
  };

  it('the exact tangent passes and states the floor of one wrong entry (51 × tolerance for 6 elements, two directions)', () => {
    for (const seed of SEEDS) {
      const o = check(tangentOp(exact), { seed });
      assert.equal(o.verdict, 'pass', show(o));
      // Bound (a) of the derivation: tol·(1 + (n − 1)/0.1)/(1 − tol) with n = 6.
      assert.ok(Math.abs(expectFloor(o, 6) - 51e-6) < 1e-9, show(o));
    }
  });

  it('every single entry wrong by a little more than the floor promises is a mismatch, for every seed', () => {
    const m0 = exact(Float64Array.from(POINT));
    const floor = expectFloor(check(tangentOp(exact)), 6);
    for (let i = 0; i < outputs.length; i++) {
      for (let j = 0; j < VARS.length; j++) {
        const delta = promisedError(floor, m0[i], j);
        for (const seed of SEEDS) {
          const o = check(
            tangentOp((x) => {
              const w = exact(x);
              w[i][j] += delta;
              return w;
            }),
            { seed },
          );
          assert.equal(o.verdict, 'mismatch', `entry [${i}, ${j}] + ${delta} (seed ${seed}): ${show(o)}`);
        }
      }
    }
  });
});

describe('engine: detection floor of @hessian H·v, against a mathjs Hessian', () => {
  // Our own scalar function of five variables.
  const text = 'x0^2 * x1 / 4 + sin(x1 + x2) * x3 + exp(x3 / 3) * x4 + log(x0^2 + x4^2 + 1) + x2 * x4 / 2';
  const n = 5;
  const names = VARS.slice(0, n);
  const point = POINT.slice(0, n);
  const f = compile(text);
  const g = names.map((a) => d(text, a));
  const gradient = g.map(compile);
  const H = g.map((ga) => names.map((b) => compile(d(ga, b))));
  const exact = (x: Float64Array): number[][] => H.map((row) => row.map((h) => value(h, x)));
  const hvpOp = (matrix: (x: Float64Array) => number[][], reference: 'gradient' | 'second differences') => {
    const built = functionOp({
      forward: (x: Float64Array) => value(f, x),
      backward: (x: Float64Array, v: Float64Array) => Float64Array.from(matrix(x).map((row) => row.reduce((s, a, k) => s + a * v[k], 0))),
      params: [['x', undefined]],
      samples: () => [Float64Array.from(point)],
    });
    built.op.kind = 'hessian';
    built.op.backwardArgs = [P, { kind: 'vector' }];
    if (reference === 'gradient') {
      built.exposed.opGradient = (x: Float64Array) => Float64Array.from(gradient.map((gk) => value(gk, x)));
      built.op.gradient = { name: 'opGradient', backwardName: 'opGradient', backwardIsMethod: false, args: [P] };
    }
    return built;
  };

  for (const reference of ['gradient', 'second differences'] as const) {
    it(`(reference: ${reference}) the exact H·v passes with a floor; every entry wrong by a little more than it promises is a mismatch`, () => {
      const m0 = exact(Float64Array.from(point));
      const ok = check(hvpOp(exact, reference));
      assert.equal(ok.verdict, 'pass', show(ok));
      const floor = expectFloor(ok, n);
      for (let i = 0; i < n; i++) {
        for (let j = 0; j < n; j++) {
          const delta = promisedError(floor, m0[i], j);
          for (const seed of SEEDS) {
            const o = check(
              hvpOp((x) => {
                const w = exact(x);
                w[i][j] += delta;
                return w;
              }, reference),
              { seed },
            );
            assert.equal(o.verdict, 'mismatch', `H[${i}, ${j}] + ${delta} (seed ${seed}): ${show(o)}`);
          }
        }
      }
    });
  }
});

describe('engine: a directional check passes only on outputs it judged', () => {
  // Outputs sin(k_i·x) with k_i near 10⁴ (our own example): the first central difference is off
  // by about (k·h)²/6 ≈ 6e-4 relative (Nocedal & Wright §8.1), so every output is suspicious
  // until Ridders' extrapolation refines it. Refinement takes the 16 worst outputs of a direction.
  const build = (m: number) => {
    const k = Array.from({ length: m }, (_, i) => 1e4 * (1 + i / 40));
    const built = functionOp({
      forward: (x: number) => Float64Array.from(k, (ki) => Math.sin(ki * x)),
      backward: (x: number, dx: number) => Float64Array.from(k, (ki) => ki * Math.cos(ki * x) * dx),
      params: [['x', undefined]],
      samples: () => [0.3],
    });
    built.op.kind = 'tangent';
    built.op.backwardArgs = [P, { kind: 'tangent', name: 'x' }];
    return built;
  };

  it('a correct tangent whose 16 suspicious outputs all refine to agreement passes', () => {
    const o = check(build(16));
    assert.equal(o.verdict, 'pass', show(o));
  });

  it('with 20 suspicious outputs, the 4 left unrefined make it inconclusive, not a pass', () => {
    const o = check(build(20));
    assert.equal(o.verdict, 'inconclusive', show(o));
    assert.match(o.message, /4 suspicious outputs could not be refined within the limits/, show(o));
  });
});
