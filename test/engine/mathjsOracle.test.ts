// mathjs `derivative` (npm registry, symbolic differentiation) as an oracle on randomly
// generated expression trees (seeded): the exact derivative as the backward must pass, the same
// derivative perturbed must be a mismatch, and the engine's numeric estimate must match the
// exact derivative to 1e-8 relative where the point is well conditioned (filter below).

import assert from 'node:assert/strict';
import { derivative, parse, type MathNode } from 'mathjs';
import { createRandom, type RandomSource } from '../../server/src/engine/random';
import { check, functionOp, show, spec } from './opBuilder';

/** A random expression in x of the given depth; domains kept safe on [0.5, 2] by construction. */
function randomExpression(r: RandomSource, depth: number): string {
  const constant = () => (0.5 + 1.5 * r()).toFixed(3);
  if (depth === 0) return r() < 0.7 ? 'x' : constant();
  const a = () => randomExpression(r, depth - 1);
  const pick = Math.floor(r() * 10);
  switch (pick) {
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
    case 8:
      return `sqrt(${a()}^2 + 1)`;
    default:
      return `tanh(${a()})`;
  }
}

interface Case {
  text: string;
  f: (x: number) => number;
  df: (x: number) => number;
  d3: (x: number) => number;
}

function compileCase(text: string): Case {
  const node: MathNode = parse(text);
  // Unsimplified: the same derivative, without mathjs's algebraic simplification, which takes
  // seconds on third derivatives of deep trees.
  const d1 = derivative(node, 'x', { simplify: false });
  const d3 = derivative(derivative(d1, 'x', { simplify: false }), 'x', { simplify: false });
  const cf = node.compile();
  const c1 = d1.compile();
  const c3 = d3.compile();
  return {
    text,
    f: (x) => cf.evaluate({ x }) as number,
    df: (x) => c1.evaluate({ x }) as number,
    d3: (x) => c3.evaluate({ x }) as number,
  };
}

/**
 * Well conditioned at x: the central-difference error model of Nocedal & Wright (2nd ed., §8.1),
 * h²|f'''|/6 + 8u|f|/h (truncation plus our 8-ulp roundoff allowance), is below 1e-9·|f'|, ten
 * times under the 1e-8 claim, with h the engine's step u^(1/3)·max(1, |x|). Points where the
 * derivative nearly vanishes or the function is huge against it are left out: there no
 * difference quotient reaches 1e-8 relative, which is a property of the point, not of the engine.
 */
function wellConditioned(c: Case, x: number): boolean {
  const u = 2 ** -53;
  const h = Math.cbrt(u) * Math.max(1, Math.abs(x));
  const f = c.f(x);
  const d = c.df(x);
  const e3 = c.d3(x);
  if (![f, d, e3].every(Number.isFinite) || d === 0) return false;
  return (h * h * Math.abs(e3)) / 6 + (8 * u * Math.abs(f)) / h < 1e-9 * Math.abs(d);
}

function scalarOp(c: Case, x: number, factor: number) {
  return functionOp({
    forward: (v: number) => c.f(v),
    backward: (v: number) => factor * c.df(v),
    params: [['x', spec('num', [], [x, x])]],
    backwardArgs: ['x'],
  });
}

describe('engine: mathjs derivative as oracle on random expressions', () => {
  const r = createRandom(20240601);
  const cases: { c: Case; x: number }[] = [];
  for (let k = 0; cases.length < 40 && k < 400; k++) {
    const c = compileCase(randomExpression(r, 1 + Math.floor(r() * 3)));
    const x = 0.5 + 1.5 * r();
    if (c.text.includes('x') && wellConditioned(c, x)) cases.push({ c, x });
  }

  it('the generator yields at least 40 well-conditioned cases from its seed', () => {
    assert.equal(cases.length, 40);
  });

  cases.forEach(({ c, x }, k) => {
    it(`#${k} ${c.text} at x = ${x.toFixed(4)}: exact derivative passes, numeric estimate within 1e-8`, () => {
      const o = check(scalarOp(c, x, 1));
      assert.equal(o.verdict, 'pass', show(o));
      const exact = c.df(x);
      const numeric = o.params[0].worst!.numeric;
      const rel = Math.abs(numeric - exact) / Math.abs(exact);
      assert.ok(rel < 1e-8, `numeric ${numeric}, mathjs derivative ${exact}, relative error ${rel}`);
    });

    it(`#${k} ${c.text}: derivative ×(1 + 1e-4) and with flipped sign are mismatches`, () => {
      assert.equal(check(scalarOp(c, x, 1 + 1e-4)).verdict, 'mismatch', c.text);
      assert.equal(check(scalarOp(c, x, -1)).verdict, 'mismatch', c.text);
    });
  });
});
