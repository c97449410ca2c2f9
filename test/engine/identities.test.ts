// Derivative identities from Abramowitz & Stegun, Handbook of Mathematical Functions (1964),
// chapter 4 (elementary functions) and 7.1.19 (erf), as correct backwards that must pass, and
// the same backwards perturbed in realistic ways that must be mismatches. Section numbers of
// chapter 4 (4.1 logarithm, 4.2 exponential, 4.3 circular, 4.4 inverse circular, 4.5
// hyperbolic) and the series 7.1.5 are quoted from memory; 7.1.19 is the erf derivative.

import assert from 'node:assert/strict';
import { erf as mathjsErf } from 'mathjs';
import { check, functionOp, show, spec } from './opBuilder';

type Scalar = (x: number) => number;

interface Identity {
  name: string;
  f: Scalar;
  df: Scalar;
  range: [number, number];
  source: string;
}

/** erf by its Maclaurin series (A&S 7.1.5), summed until the terms fall below 1e-17 of the sum. */
function erfSeries(x: number): number {
  let term = x;
  let sum = x;
  for (let n = 1; n < 80; n++) {
    term *= (-x * x) / n;
    const add = term / (2 * n + 1);
    sum += add;
    if (Math.abs(add) < 1e-17 * Math.abs(sum)) break;
  }
  return (2 / Math.sqrt(Math.PI)) * sum;
}

const identities: Identity[] = [
  { name: 'ln', f: Math.log, df: (x) => 1 / x, range: [0.1, 10], source: 'A&S §4.1: d/dx ln x = 1/x' },
  { name: 'exp', f: Math.exp, df: Math.exp, range: [-5, 5], source: 'A&S §4.2: d/dx e^x = e^x' },
  { name: 'sin', f: Math.sin, df: Math.cos, range: [-3, 3], source: 'A&S §4.3: d/dx sin x = cos x' },
  { name: 'cos', f: Math.cos, df: (x) => -Math.sin(x), range: [-3, 3], source: 'A&S §4.3: d/dx cos x = −sin x' },
  { name: 'tan', f: Math.tan, df: (x) => 1 / Math.cos(x) ** 2, range: [-1.2, 1.2], source: 'A&S §4.3: d/dx tan x = sec² x' },
  { name: 'atan', f: Math.atan, df: (x) => 1 / (1 + x * x), range: [-4, 4], source: 'A&S §4.4: d/dx arctan x = 1/(1+x²)' },
  { name: 'asin', f: Math.asin, df: (x) => 1 / Math.sqrt(1 - x * x), range: [-0.9, 0.9], source: 'A&S §4.4: d/dx arcsin x = (1−x²)^(−1/2)' },
  { name: 'sinh', f: Math.sinh, df: Math.cosh, range: [-3, 3], source: 'A&S §4.5: d/dx sinh x = cosh x' },
  { name: 'tanh', f: Math.tanh, df: (x) => 1 / Math.cosh(x) ** 2, range: [-3, 3], source: 'A&S §4.5: d/dx tanh x = sech² x' },
  { name: 'erf', f: erfSeries, df: (x) => (2 / Math.sqrt(Math.PI)) * Math.exp(-x * x), range: [-2, 2], source: 'A&S 7.1.19: d/dx erf x = (2/√π) e^(−x²)' },
];

function elementwise(f: Scalar, df: Scalar, bug: (g: number, i: number, x: number) => number, range: [number, number], n = 24) {
  return functionOp({
    forward: (x: Float64Array) => {
      const y = new Float64Array(x.length);
      for (let i = 0; i < x.length; i++) y[i] = f(x[i]);
      return y;
    },
    backward: (x: Float64Array, dy: Float64Array) => {
      const g = new Float64Array(x.length);
      for (let i = 0; i < x.length; i++) g[i] = bug(dy[i] * df(x[i]), i, x[i]);
      return g;
    },
    params: [['x', spec('f64', [n], range)]],
  });
}

describe('engine: Abramowitz & Stegun derivative identities', () => {
  it('the erf series used as a forward agrees with mathjs erf to 1e-15 relative', () => {
    // Reference: mathjs `erf` (npm registry) at points of [-2, 2].
    for (const x of [-2, -1.3, -0.5, 0.1, 0.5, 1, 1.7, 2]) {
      const ours = erfSeries(x);
      const ref = mathjsErf(x) as number;
      assert.ok(Math.abs(ours - ref) <= 1e-15 * Math.abs(ref) + 1e-16, `erf(${x}): series ${ours}, mathjs ${ref}`);
    }
  });

  for (const id of identities) {
    it(`${id.name}: the exact derivative passes (${id.source})`, () => {
      const o = check(elementwise(id.f, id.df, (g) => g, id.range));
      assert.equal(o.verdict, 'pass', show(o));
      assert.ok(o.params[0].maxRelError < 1e-7, `max relative error ${o.params[0].maxRelError} (${id.source})`);
    });

    it(`${id.name}: ×(1 + 1e-4) is a mismatch (${id.source}, perturbed)`, () => {
      const o = check(elementwise(id.f, id.df, (g) => g * (1 + 1e-4), id.range));
      assert.equal(o.verdict, 'mismatch', show(o));
      assert.ok(Math.abs(o.params[0].maxRelError - 1e-4) < 2e-5, `relative error ${o.params[0].maxRelError} should be ≈ 1e-4`);
    });

    it(`${id.name}: a flipped sign is a mismatch with the sign hint (${id.source}, perturbed)`, () => {
      const o = check(elementwise(id.f, id.df, (g) => -g, id.range));
      assert.equal(o.verdict, 'mismatch', show(o));
      assert.ok(
        o.params[0].hints.some((h) => h.includes('sign is flipped')),
        show(o),
      );
    });

    it(`${id.name}: wrong at one index is a mismatch naming that index (${id.source}, perturbed)`, () => {
      const o = check(elementwise(id.f, id.df, (g, i) => (i === 13 ? g * 1.001 : g), id.range));
      assert.equal(o.verdict, 'mismatch', show(o));
      assert.deepEqual(o.params[0].worst?.index, [13]);
      assert.ok(
        o.params[0].hints.some((h) => h.includes('wrong only at x[13]')),
        show(o),
      );
    });
  }
});
