// Discovery of every forward form and backward resolution the interface allows
// (docs/annotations.md, "Where the tags go"), with exact positions of names and tags.
import assert from 'node:assert/strict';
import { OP_TAG_NAMES } from '../../server/src/discovery/index';
import { at, discover, expectProblem, opNamed } from './helpers';

// Fixture: a fictional greenhouse climate controller's ops (our own scenario).
const FORMS = `import { ventBackward as importedVentBackward } from './vents';
import * as lib from './lib';

/**
 * Heat loss through the glass.
 * @backward heatLossBackward
 * @sample t f64[8] in [-10, 30]
 */
function heatLoss(t: Float64Array): Float64Array { return t; }
function heatLossBackward(t: Float64Array, dy: Float64Array): Float64Array { return dy; }

/**
 * @backward humidityBackward
 * @sample h num
 */
export function humidity(h: number): number { return h; }
export const humidityBackward = (h: number, dy: number) => dy;

/**
 * @backward importedVentBackward
 * @sample a num
 * @sample b num
 */
export const vent = (a: number, b: number): number => a * b;

/**
 * @backward shadeBackward
 * @sample s f32[4]
 */
const shade = function (s: Float32Array): Float32Array { return s; };
function shadeBackward(s: Float32Array, dy: Float32Array) { return dy; }

class Damper {
  /**
   * @backward stepBackward
   * @sample this.gain num[2, 3]
   * @sample x num[3]
   */
  step(x: number[]): number[][] { return [x]; }
  stepBackward(dy: number[][]) { return dy; }
}

export class Heater extends Damper {
  /**
   * @backward stepBackward
   * @sample p num
   */
  power(p: number): number[][] { return [[p]]; }
  /**
   * @backward outsideBackward
   * @sample p num
   */
  warm(p: number): number { return p; }
}
function outsideBackward(dy: number) { return dy; }
`;

describe('discovery: forward forms', () => {
  const r = discover(FORMS);

  it('finds every annotated forward, in source order, and nothing else', () => {
    // Spec: docs/annotations.md — function declarations, const arrows, const function
    // expressions and class methods, exported or not.
    assert.deepEqual(
      r.ops.map((o) => o.forward),
      ['heatLoss', 'humidity', 'vent', 'shade', 'Damper.step', 'Heater.power', 'Heater.warm'],
    );
    assert.deepEqual(r.fileProblems, []);
    for (const op of r.ops) assert.deepEqual(op.problems, [], `${op.forward}: ${JSON.stringify(op.problems)}`);
  });

  it('places each op on its forward name (1-based, end exclusive)', () => {
    // Positions counted from the fixture text by string search (helpers.at).
    const cases: [string, string][] = [
      ['heatLoss', 'function heatLoss('],
      ['humidity', 'export function humidity('],
      ['vent', 'export const vent'],
      ['shade', 'const shade'],
      ['Damper.step', '  step(x'],
    ];
    for (const [name, needle] of cases) {
      const op = opNamed(r, name);
      const shift = needle.indexOf(name.split('.').pop()!);
      const pos = at(FORMS, needle, 0, shift);
      assert.deepEqual([op.line, op.column], [pos.line, pos.column], name);
      const len = name.split('.').pop()!.length;
      assert.deepEqual([op.endLine, op.endColumn], [pos.line, pos.column + len], name);
    }
  });

  it('fills the target: function vs method, class name, backward binding', () => {
    assert.deepEqual(opNamed(r, 'heatLoss').target, { kind: 'function', forwardName: 'heatLoss', backwardName: 'heatLossBackward', backwardIsMethod: false });
    assert.deepEqual(opNamed(r, 'Damper.step').target, { kind: 'method', forwardName: 'step', className: 'Damper', backwardName: 'stepBackward', backwardIsMethod: true });
    // An inherited method of a same-file base class is found on the base.
    const power = opNamed(r, 'Heater.power');
    assert.equal(power.target.backwardIsMethod, true);
    assert.deepEqual(power.backwardLocation, { file: '/work/fixture/ops.ts', ...at(FORMS, 'stepBackward(dy') });
    // A method may name a top-level function as its backward.
    const warm = opNamed(r, 'Heater.warm');
    assert.equal(warm.target.backwardIsMethod, false);
    assert.deepEqual(warm.backwardLocation, { file: '/work/fixture/ops.ts', ...at(FORMS, 'outsideBackward(dy', 0, 0) });
  });

  it('resolves backwards declared as functions, consts and imports', () => {
    assert.deepEqual(opNamed(r, 'heatLoss').backwardLocation, { file: '/work/fixture/ops.ts', ...at(FORMS, 'heatLossBackward(t') });
    assert.deepEqual(opNamed(r, 'humidity').backwardLocation, { file: '/work/fixture/ops.ts', ...at(FORMS, 'humidityBackward =') });
    // The import specifier's local name (after `as`).
    assert.deepEqual(opNamed(r, 'vent').backwardLocation, { file: '/work/fixture/ops.ts', ...at(FORMS, 'importedVentBackward }') });
  });

  it('builds the default backward argument lists', () => {
    // docs/annotations.md, "@backward": functions get every forward parameter then $dy; methods $dy alone.
    assert.deepEqual(opNamed(r, 'vent').backwardArgs, [{ kind: 'param', name: 'a' }, { kind: 'param', name: 'b' }, { kind: 'upstream' }]);
    assert.deepEqual(opNamed(r, 'Damper.step').backwardArgs, [{ kind: 'upstream' }]);
  });

  it('lists parameters in declaration order, then this.FIELD entries', () => {
    const step = opNamed(r, 'Damper.step');
    assert.deepEqual(
      step.params.map((p) => [p.name, p.isField]),
      [
        ['x', false],
        ['this.gain', true],
      ],
    );
    assert.deepEqual(step.params[1]!.sample, { kind: 'random', dtype: 'num', shape: [2, 3], range: [-1, 1], avoid: [], fixed: false });
  });

  it('records every tag with its place, and the parameter of each @sample', () => {
    const step = opNamed(r, 'Damper.step');
    const b = at(FORMS, '@backward stepBackward');
    const s1 = at(FORMS, '@sample this.gain');
    const s2 = at(FORMS, '@sample x num[3]');
    assert.deepEqual(step.tags, [
      { tag: 'backward', line: b.line, column: b.column, endLine: b.line, endColumn: b.column + '@backward stepBackward'.length },
      { tag: 'sample', param: 'this.gain', line: s1.line, column: s1.column, endLine: s1.line, endColumn: s1.column + '@sample this.gain num[2, 3]'.length },
      { tag: 'sample', param: 'x', line: s2.line, column: s2.column, endLine: s2.line, endColumn: s2.column + '@sample x num[3]'.length },
    ]);
  });

  it('exports our tag names', () => {
    assert.deepEqual([...OP_TAG_NAMES].sort(), ['backward', 'construct', 'fixed', 'gradientField', 'hessian', 'jacobian', 'sample', 'samples', 'seed', 'tangent', 'tolerance']);
  });
});

describe('discovery: optional tags', () => {
  const text = `/**
 * @backward lossBackward(pred, target, $y, $dy)
 * @samples lossInputs
 * @fixed target, weights
 * @tolerance 2.5e-7
 * @seed 4242
 */
export function loss(pred: Float64Array, target: Float64Array, weights: Float64Array): number { return 0; }
export function lossBackward() {}
export function lossInputs(random: () => number) { return [random()]; }

export class Cell {
  /**
   * @backward back
   * @construct makeCell
   * @sample x f64[2]
   */
  run(x: Float64Array): number { return 0; }
  back() {}
}
export function makeCell() { return new Cell(); }
`;
  const r = discover(text);

  it('reads @samples, @fixed, @tolerance, @seed and an explicit backward list', () => {
    const loss = opNamed(r, 'loss');
    assert.deepEqual(loss.problems, []);
    assert.equal(loss.target.samplesFactory, 'lossInputs');
    assert.deepEqual(loss.fixed, ['target', 'weights']);
    // 2.5e-7 and 4242 read as the IEEE 754-2019 binary64 values of the same JavaScript literals
    // (ECMA-262 NumericLiteral, round to nearest).
    assert.equal(loss.tolerance, 2.5e-7);
    assert.equal(loss.seed, 4242);
    assert.deepEqual(loss.backwardArgs, [{ kind: 'param', name: 'pred' }, { kind: 'param', name: 'target' }, { kind: 'output' }, { kind: 'upstream' }]);
    // With @samples, parameters carry no spec.
    assert.deepEqual(loss.params, [
      { name: 'pred', isField: false },
      { name: 'target', isField: false },
      { name: 'weights', isField: false },
    ]);
  });

  it('reads @construct on a method', () => {
    const run = opNamed(r, 'Cell.run');
    assert.deepEqual(run.problems, []);
    assert.equal(run.target.constructFactory, 'makeCell');
    assert.equal(run.tolerance, undefined);
    assert.equal(run.seed, undefined);
  });

  it('ignores functions without our tags and ordinary JSDoc tags', () => {
    const plain = `/**
 * Ordinary documentation.
 * @param x the input
 * @returns twice x
 * @example double(2)
 * @deprecated use triple
 * @see triple
 * @throws never
 * @template T
 * @remarks none
 * @internal
 */
export function double(x: number) { return 2 * x; }
/**
 * @backward b
 * @sample x num
 * @param x documented as usual
 * @returns a number
 * @customthing whatever
 */
export function withDocs(x: number) { return x; }
function b() {}
`;
    const res = discover(plain);
    assert.deepEqual(
      res.ops.map((o) => o.forward),
      ['withDocs'],
    );
    assert.deepEqual(res.ops[0]!.problems, []);
    // Only our tags are listed on the op.
    assert.deepEqual(
      res.ops[0]!.tags.map((t) => t.tag),
      ['backward', 'sample'],
    );
  });

  it('reads one-line JSDoc comments and tags from stacked JSDoc blocks', () => {
    const text = `/** @backward fb @sample x num in [0, 1] */
export function f(x: number) { return x; }
function fb() {}
/** Greenhouse module, version 2. */
/**
 * @backward gb
 * @sample y num
 */
export function g(y: number) { return y; }
function gb() {}
`;
    const r = discover(text);
    const f = opNamed(r, 'f');
    assert.deepEqual(f.problems, []);
    assert.deepEqual(f.params[0]!.sample, { kind: 'random', dtype: 'num', shape: [], range: [0, 1], avoid: [], fixed: false });
    // The @backward tag ends where its body ends, before the next tag on the same line.
    const b = at(text, '@backward fb');
    assert.deepEqual(f.tags[0], { tag: 'backward', line: b.line, column: b.column, endLine: b.line, endColumn: b.column + '@backward fb'.length });
    assert.deepEqual(opNamed(r, 'g').problems, []);
  });

  it('skips tags shown inside a fenced example', () => {
    const fenced = `/**
 * Usage:
 * \`\`\`ts
 * @sample q f64[3]
 * \`\`\`
 * @backward b
 * @sample x num
 * @example
 * \`\`\`
 * @sampel nonsense
 * @backward other
 * \`\`\`
 */
export function f(x: number) { return x; }
function b() {}
`;
    const res = discover(fenced);
    const op = opNamed(res, 'f');
    assert.deepEqual(op.problems, []);
    assert.equal(op.backward, 'b');
    assert.deepEqual(
      op.tags.map((t) => t.param ?? t.tag),
      ['backward', 'x'],
    );
  });

  it('rejects a class field holding a function, forward or backward: the engine calls prototype methods', () => {
    const text = `class Gate {
  /**
   * @backward openBackward
   * @sample v num
   */
  open = (v: number): number => v;
  /**
   * @backward shutBackward
   * @sample v num
   */
  shut(v: number): number { return v; }
  openBackward = (dy: number) => dy;
  shutBackward = (dy: number) => dy;
}
`;
    const res = discover(text);
    expectProblem(text, opNamed(res, 'Gate.open'), 'open =', /'open' is a field holding a function, not a method/);
    expectProblem(text, opNamed(res, 'Gate.shut'), 'shutBackward\n', /backward 'shutBackward' not found: it must be a method of Gate/);
  });

  it('assumes a method backward may be inherited from a base class declared elsewhere', () => {
    const res = discover(`import { Base } from './base';
class Child extends Base {
  /**
   * @backward inheritedBackward
   * @sample v num
   */
  go(v: number): number { return v; }
}
`);
    const op = opNamed(res, 'Child.go');
    assert.deepEqual(op.problems, []);
    assert.equal(op.target.backwardIsMethod, true);
    assert.equal(op.backwardLocation, undefined);
  });

  it('reads .tsx and .js files with the matching parser', () => {
    const res = discover(
      `/**
 * @backward gb
 * @sample x num
 */
export function g(x) { return <b>{x}</b>; }
function gb() {}
`,
      '/work/fixture/view.tsx',
    );
    assert.deepEqual(res.fileProblems, []);
    assert.equal(opNamed(res, 'g').problems.length, 0);
  });
});
