// Discovery of the derivative tags @jacobian, @tangent and @hessian: default and explicit
// argument lists, one op per tag on one forward, the Hessian's link to a @backward, and
// mistakes placed on the tag (misspelt tags get "did you mean").

import assert from 'node:assert/strict';
import { discover, expectProblem } from './helpers';

const TEXT = `
/**
 * @jacobian reachJacobian
 * @tangent reachTangent(q, $dq)
 * @sample q f64[2] in [-3, 3]
 * @sample link num fixed
 */
export function reach(q: Float64Array, link: number): Float64Array { return q; }
export function reachJacobian(q: Float64Array, link: number) { return [[1, 0], [0, 1]]; }
export function reachTangent(q: Float64Array, dq: Float64Array) { return dq; }

/**
 * @backward costGrad
 * @hessian costHessian
 * @sample x f64[3]
 */
export function cost(x: Float64Array): number { return 0; }
export function costGrad(x: Float64Array, dy: number) { return x; }
export function costHessian(x: Float64Array) { return [[1]]; }

/**
 * @tangent wobbleTangent
 * @hessian wobbleHvp(x, $v)
 * @sample x f64[2]
 * @sample k num fixed
 */
export function wobble(x: Float64Array, k: number): number { return 0; }
export function wobbleTangent() { return 0; }
export function wobbleHvp() { return 0; }
`;

describe('discovery: derivative kinds', () => {
  const r = discover(TEXT);
  const byName = (name: string) => {
    const found = r.ops.filter((o) => o.forward === name);
    assert.equal(found.length, 1, `ops: ${r.ops.map((o) => o.forward).join(', ')}`);
    return found[0]!;
  };

  it('gives one op per derivative tag, the kind in the op and in its display name', () => {
    assert.deepEqual(
      r.ops.map((o) => [o.forward, o.kind ?? 'backward']),
      [
        ['reach @jacobian', 'jacobian'],
        ['reach @tangent', 'tangent'],
        ['cost', 'backward'],
        ['cost @hessian', 'hessian'],
        ['wobble @tangent', 'tangent'],
        ['wobble @hessian', 'hessian'],
      ],
    );
    for (const op of r.ops) assert.deepEqual(op.problems, [], `${op.forward}: ${JSON.stringify(op.problems)}`);
  });

  it('default lists: every parameter (fixed ones too); @tangent adds one $d per differentiated parameter', () => {
    assert.deepEqual(byName('reach @jacobian').backwardArgs, [
      { kind: 'param', name: 'q' },
      { kind: 'param', name: 'link' },
    ]);
    assert.deepEqual(byName('wobble @tangent').backwardArgs, [
      { kind: 'param', name: 'x' },
      { kind: 'param', name: 'k' },
      { kind: 'tangent', name: 'x' },
    ]);
    assert.deepEqual(byName('cost @hessian').backwardArgs, [{ kind: 'param', name: 'x' }]);
  });

  it('explicit lists: $dNAME and $v', () => {
    assert.deepEqual(byName('reach @tangent').backwardArgs, [
      { kind: 'param', name: 'q' },
      { kind: 'tangent', name: 'q' },
    ]);
    assert.deepEqual(byName('wobble @hessian').backwardArgs, [{ kind: 'param', name: 'x' }, { kind: 'vector' }]);
    assert.equal(byName('reach @tangent').target.backwardName, 'reachTangent');
  });

  it('a @hessian beside a @backward knows that backward (its reference when it passes)', () => {
    assert.deepEqual(byName('cost @hessian').gradient, {
      name: 'costGrad',
      backwardName: 'costGrad',
      backwardIsMethod: false,
      args: [{ kind: 'param', name: 'x' }, { kind: 'upstream' }],
    });
    assert.equal(byName('wobble @hessian').gradient, undefined);
  });

  it('mistakes are placed on the tag: unknown names, placeholders, misspelt tags', () => {
    const text = `
/**
 * @jacobain armJ
 * @tangent armT(q, $dz)
 * @hessian armH(q, $dy)
 * @sample q f64[2]
 */
export function arm(q: Float64Array): number { return 0; }
export function armT() { return 0; }
export function armH() { return 0; }
`;
    const res = discover(text);
    const tangent = res.ops.find((o) => o.kind === 'tangent')!;
    expectProblem(text, tangent, '$dz', /@tangent: '\$dz' is the tangent of 'z', which is not a parameter of arm/);
    expectProblem(text, tangent, '@jacobain', /unknown tag @jacobain; did you mean @jacobian\?/);
    const hessian = res.ops.find((o) => o.kind === 'hessian')!;
    expectProblem(text, hessian, '$dy', /\$dy \(an upstream gradient\) belongs to @backward/);
    const missing = discover(text.replace('armH(q, $dy)', 'armHess'));
    expectProblem(
      text.replace('armH(q, $dy)', 'armHess'),
      missing.ops.find((o) => o.kind === 'hessian')!,
      'armHess',
      /hessian 'armHess' not found/,
    );
  });

  it('a @hessian on a forward declared to return an array is an error on the tag', () => {
    const text = `
/**
 * @hessian vh
 * @sample q f64[2]
 */
export function v(q: Float64Array): Float64Array { return q; }
export function vh() { return 0; }
`;
    const op = discover(text).ops[0]!;
    expectProblem(text, op, 'vh', /a Hessian needs a forward that returns a number/);
  });
});

describe('discovery: derivative kinds keep their problems apart', () => {
  it("a @backward's own mistake stays on the @backward op; the @hessian op runs against second differences", () => {
    const text = `
/**
 * @sample v f64[2]
 * @backward gradOf(v, $dq)
 * @hessian hessOf
 */
export function cost(v: Float64Array): number { return 0; }
export function gradOf() { return 0; }
export function hessOf() { return 0; }
`;
    const r = discover(text);
    const backward = r.ops.find((o) => o.kind === undefined)!;
    const hessian = r.ops.find((o) => o.kind === 'hessian')!;
    expectProblem(text, backward, '$dq', /unknown placeholder '\$dq'/);
    assert.deepEqual(hessian.problems, []);
    assert.equal(hessian.gradient, undefined);
  });
});
