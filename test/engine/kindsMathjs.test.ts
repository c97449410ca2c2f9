// mathjs `derivative` (npm registry, symbolic differentiation) as the oracle for the derivative
// kinds, on random expression trees in x and y (seeded): the exact Jacobian of three
// expressions and the exact Hessian of one (by differentiating twice) must pass; the same with
// one entry ×(1 + 1e-3) must be a mismatch that names that entry.

import assert from 'node:assert/strict';
import { derivative, parse, type EvalFunction } from 'mathjs';
import { createRandom, type RandomSource } from '../../server/src/engine/random';
import type { BackwardArg } from '../../server/src/model/types';
import { check, functionOp, show } from './opBuilder';

/** A random expression in x and y; domains safe everywhere by construction. */
function randomExpression(r: RandomSource, depth: number): string {
  const constant = () => (0.5 + 1.5 * r()).toFixed(3);
  if (depth === 0) return r() < 0.4 ? 'x' : r() < 0.8 ? 'y' : constant();
  const a = () => randomExpression(r, depth - 1);
  switch (Math.floor(r() * 9)) {
    case 0:
      return `(${a()} + ${a()})`;
    case 1:
      return `(${a()} - ${a()})`;
    case 2:
      return `(${a()} * ${a()})`;
    case 3:
      return `(${a()} / (${a()}^2 + 1))`;
    case 4:
      return `sin(${a()})`;
    case 5:
      return `cos(${a()})`;
    case 6:
      return `exp(${a()} / 4)`;
    case 7:
      return `log(${a()}^2 + 1)`;
    default:
      return `tanh(${a()})`;
  }
}

const compile = (text: string): EvalFunction => parse(text).compile();
const d = (text: string, v: string): string => derivative(parse(text), v, { simplify: false }).toString();
const at = (f: EvalFunction, v: Float64Array): number => f.evaluate({ x: v[0], y: v[1] }) as number;
const P: BackwardArg[] = [{ kind: 'param', name: 'v' }];

/** An expression of both variables, with a point in [0.5, 2]². */
function draw(r: RandomSource): { text: string; point: [number, number] } {
  for (;;) {
    const text = randomExpression(r, 2 + Math.floor(r() * 2));
    if (text.includes('x') && text.includes('y')) return { text, point: [0.5 + 1.5 * r(), 0.5 + 1.5 * r()] };
  }
}

describe('engine: mathjs derivatives as the oracle for @jacobian and @hessian', () => {
  const r = createRandom(20261203);

  for (let k = 0; k < 10; k++) {
    const parts = [draw(r), draw(r), draw(r)];
    const point = parts[0].point;
    const fs = parts.map((p) => compile(p.text));
    const J = parts.map((p) => [compile(d(p.text, 'x')), compile(d(p.text, 'y'))]);
    const forward = (v: Float64Array): Float64Array => Float64Array.from(fs.map((f) => at(f, v)));
    const exact = (v: Float64Array): number[][] => J.map((row) => row.map((f) => at(f, v)));
    it(`Jacobian #${k} of [${parts.map((p) => p.text).join(', ')}]: exact passes, one entry ×(1 + 1e-3) is named`, () => {
      const built = functionOp({ forward, backward: exact, params: [['v', undefined]], samples: () => [Float64Array.from(point)] });
      built.op.kind = 'jacobian';
      built.op.backwardArgs = P;
      const o = check(built);
      assert.equal(o.verdict, 'pass', show(o));
      // The largest entry is the one made wrong, so it stands clear of the relative floor.
      const m = exact(Float64Array.from(point));
      let bi = 0;
      let bj = 0;
      for (let i = 0; i < 3; i++) for (let j = 0; j < 2; j++) if (Math.abs(m[i][j]) > Math.abs(m[bi][bj])) [bi, bj] = [i, j];
      const wrong = functionOp({
        forward,
        backward: (v: Float64Array) => {
          const w = exact(v);
          w[bi][bj] *= 1 + 1e-3;
          return w;
        },
        params: [['v', undefined]],
        samples: () => [Float64Array.from(point)],
      });
      wrong.op.kind = 'jacobian';
      wrong.op.backwardArgs = P;
      const bad = check(wrong);
      assert.equal(bad.verdict, 'mismatch', show(bad));
      assert.ok(bad.message.startsWith(`J[${bi}, ${bj}] (output ${bi}, v[${bj}])`), show(bad));
    });
  }

  for (let k = 0; k < 10; k++) {
    // Redraw until the Hessian is clearly non-zero (`x - x` can make it vanish: no entry to make wrong).
    let text = '';
    let point: [number, number] = [0, 0];
    let gx = '';
    let gy = '';
    let H: EvalFunction[][] = [];
    do {
      ({ text, point } = draw(r));
      gx = d(text, 'x');
      gy = d(text, 'y');
      H = [
        [compile(d(gx, 'x')), compile(d(gx, 'y'))],
        [compile(d(gy, 'x')), compile(d(gy, 'y'))],
      ];
    } while (Math.max(...H.flat().map((h) => Math.abs(at(h, Float64Array.from(point))))) < 1e-2);
    const f = compile(text);
    const g = [compile(gx), compile(gy)];
    const exact = (v: Float64Array): number[][] => H.map((row) => row.map((h) => at(h, v)));
    const gradient = (v: Float64Array): Float64Array => Float64Array.from(g.map((gi) => at(gi, v)));
    for (const reference of ['second differences', 'gradient'] as const) {
      it(`Hessian #${k} of ${text} (${reference}): exact passes, one entry ×(1 + 1e-3) is named`, () => {
        const build = (hess: (v: Float64Array) => number[][]) => {
          const built = functionOp({ forward: (v: Float64Array) => at(f, v), backward: hess, params: [['v', undefined]], samples: () => [Float64Array.from(point)] });
          built.op.kind = 'hessian';
          built.op.backwardArgs = P;
          if (reference === 'gradient') {
            built.exposed.opGradient = gradient;
            built.op.gradient = { name: 'opGradient', backwardName: 'opGradient', backwardIsMethod: false, args: P };
          }
          return built;
        };
        const o = check(build(exact));
        assert.notEqual(o.verdict, 'mismatch', show(o));
        assert.equal(o.verdict, 'pass', show(o));
        const m = exact(Float64Array.from(point));
        let bi = 0;
        let bj = 0;
        for (let i = 0; i < 2; i++) for (let j = 0; j < 2; j++) if (Math.abs(m[i][j]) > Math.abs(m[bi][bj])) [bi, bj] = [i, j];
        const bad = check(
          build((v) => {
            const w = exact(v);
            w[bi][bj] *= 1 + 1e-3;
            return w;
          }),
        );
        assert.equal(bad.verdict, 'mismatch', show(bad));
        assert.ok(bad.message.startsWith(`H[${bi}, ${bj}]`), show(bad));
      });
    }
  }
});
