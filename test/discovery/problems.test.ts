// Every annotation mistake docs/annotations.md names (and the README: "never as a crash") becomes
// a problem on the op at the exact line and column of the offending tag or token, never an
// exception. Expected positions are where the needle stands in the fixture (helpers.at).
import assert from 'node:assert/strict';
import { discover, expectProblem, opNamed, withDoc } from './helpers';

describe('discovery: annotation mistakes', () => {
  it('misspelled tags get "did you mean"; unrelated unknown tags are ignored', () => {
    // One swapped pair of letters is one edit (Damerau 1964's single-error classes).
    const text = withDoc(
      ['@backward fb', '@sampel x num', '@tolerence 1e-5', '@Seed 3', '@backwards gb', '@bakward hb', '@fixme later', '@customtag x'],
      'export function f(x: number) { return x; }\nfunction fb() {}',
    );
    const op = opNamed(discover(text), 'f');
    expectProblem(text, op, '@sampel', /unknown tag @sampel; did you mean @sample\?/);
    expectProblem(text, op, '@tolerence', /did you mean @tolerance\?/);
    expectProblem(text, op, '@Seed', /did you mean @seed\?/);
    expectProblem(text, op, '@backwards', /did you mean @backward\?/);
    expectProblem(text, op, '@bakward', /did you mean @backward\?/);
    // The misspelled @sample did not count, so x has none.
    expectProblem(text, op, 'x: number', /parameter 'x' has no @sample/);
    assert.equal(op.problems.length, 6, JSON.stringify(op.problems));
    // The problem covers the tag name: from '@' to its end (exclusive).
    const p = op.problems.find((q) => /@sampel/.test(q.message))!;
    assert.equal(p.endColumn! - p.column, '@sampel'.length);
  });

  it('a misspelled @backward on a sampled function still reports, instead of silence', () => {
    const text = withDoc(['@backwrd fb', '@sample x num'], 'export function f(x: number) { return x; }\nfunction fb() {}');
    const op = opNamed(discover(text), 'f');
    expectProblem(text, op, '@backwrd', /did you mean @backward\?/);
    assert.equal(op.problems.length, 1);
  });

  it('@sample without @backward', () => {
    const text = withDoc(['@sample x num'], 'export function f(x: number) { return x; }');
    const op = opNamed(discover(text), 'f');
    expectProblem(text, op, '@sample', /has sampling tags but no @backward/);
  });

  it('missing backward name, bad name, dotted name', () => {
    const text =
      withDoc(['@backward', '@sample x num'], 'export function f(x: number) { return x; }') +
      withDoc(['@backward (x, $dy)', '@sample x num'], 'export function g(x: number) { return x; }') +
      withDoc(['@backward lib.gb', '@sample x num'], 'export function h(x: number) { return x; }');
    const r = discover(text);
    expectProblem(text, opNamed(r, 'f'), '@backward\n', /@backward needs the name of the backward function/);
    expectProblem(text, opNamed(r, 'g'), '(x, $dy)', /expected the backward function's name, found '\('/);
    const dotted = expectProblem(text, opNamed(r, 'h'), 'lib.gb', /'lib.gb' is not a plain name/);
    assert.equal(dotted.endColumn! - dotted.column, 'lib.gb'.length);
    assert.equal(opNamed(r, 'h').problems.length, 1);
  });

  it('backward not found in the module, with a suggestion', () => {
    const text = `import { other } from './other';
${withDoc(['@backward softplusBackwrd', '@sample x num'], 'export function softplus(x: number) { return x; }')}
export function softplusBackward() {}
class Pump {
${withDoc(['@backward flowBackward', '@sample x num'], 'flow(x: number) { return x; }')}
  static flowBackward() {}
}
${withDoc(['@backward Pump', '@sample x num'], 'export function k(x: number) { return x; }')}`;
    const r = discover(text);
    expectProblem(
      text,
      opNamed(r, 'softplus'),
      'softplusBackwrd',
      /backward 'softplusBackwrd' not found: it must be a top-level function of this module or an import; did you mean 'softplusBackward'\?/,
    );
    // A static method cannot be called on the instance: not a match.
    expectProblem(text, opNamed(r, 'Pump.flow'), 'flowBackward\n', /backward 'flowBackward' not found: it must be a method of Pump/);
    expectProblem(text, opNamed(r, 'k'), 'Pump\n', /backward 'Pump' is a class, not a function/);
  });

  it('a parameter without @sample points at the parameter', () => {
    const text = withDoc(['@backward fb', '@sample a num'], 'export function f(a: number, b: number) { return a + b; }\nfunction fb() {}');
    const op = opNamed(discover(text), 'f');
    expectProblem(text, op, 'b: number', /parameter 'b' has no @sample: add `@sample b SPEC`/);
    assert.equal(op.problems.length, 1);
  });

  it('@sample for a name that is not a parameter, and a duplicate @sample', () => {
    const text = withDoc(
      ['@backward fb', '@sample rate num', '@sample rat num', '@sample rate num', '@sample zzz num'],
      'export function f(rate: number) { return rate; }\nfunction fb() {}',
    );
    const op = opNamed(discover(text), 'f');
    expectProblem(text, op, 'rat num', /'rat' is not a parameter of f; did you mean 'rate'\?/);
    expectProblem(text, op, 'rate num', /@sample rate is given twice/, 1);
    expectProblem(text, op, 'zzz', /'zzz' is not a parameter of f$/);
    assert.equal(op.problems.length, 3);
    assert.deepEqual(
      op.params.map((p) => p.name),
      ['rate'],
    );
  });

  it('@fixed without @samples, and an unknown @fixed name', () => {
    const text =
      withDoc(['@backward fb', '@sample x num', '@fixed x'], 'export function f(x: number) { return x; }\nfunction fb() {}') +
      withDoc(['@backward gb', '@samples gIn', '@fixed y, nope'], 'export function g(x: number, y: number) { return x; }\nfunction gb() {}\nfunction gIn() { return []; }');
    const r = discover(text);
    expectProblem(text, opNamed(r, 'f'), '@fixed', /@fixed goes with @samples/);
    expectProblem(text, opNamed(r, 'g'), 'nope', /@fixed: 'nope' is not a parameter of g/);
    assert.deepEqual(opNamed(r, 'g').fixed, ['y']);
  });

  it('@samples with @sample for a parameter, and a missing factory', () => {
    const text = withDoc(['@backward fb', '@samples makeInputs', '@sample x num'], 'export function f(x: number) { return x; }\nfunction fb() {}');
    const op = opNamed(discover(text), 'f');
    expectProblem(text, op, 'makeInputs', /@samples factory 'makeInputs' is not declared at the top level/);
    expectProblem(text, op, 'x num', /@sample x conflicts with @samples makeInputs/);
  });

  it('a backward list naming an unknown parameter, an unknown placeholder, a repeat', () => {
    const text =
      withDoc(['@backward fb(x, yy, $z, $dy)', '@sample x num'], 'export function f(x: number) { return x; }\nfunction fb() {}') +
      withDoc(['@backward gb(x, yy, $dy, $dy)', '@sample x num'], 'export function g(x: number) { return x; }\nfunction gb() {}') +
      withDoc(['@backward hb(x $dy)', '@sample x num'], 'export function h(x: number) { return x; }\nfunction hb() {}');
    const r = discover(text);
    expectProblem(text, opNamed(r, 'f'), '$z', /unknown placeholder '\$z'; use \$y/);
    expectProblem(text, opNamed(r, 'g'), 'yy', /'yy' is not a parameter of g/, 1);
    expectProblem(text, opNamed(r, 'g'), '$dy)', /'\$dy' is listed twice/, 1);
    expectProblem(text, opNamed(r, 'h'), '$dy)', /expected ',' or '\)'/, 2);
  });

  it('@construct on a function, and this.FIELD on a function', () => {
    const text = withDoc(
      ['@backward fb(this.w, $dy)', '@construct make', '@sample x num', '@sample this.w num'],
      'export function f(x: number) { return x; }\nfunction fb() {}\nfunction make() {}',
    );
    const op = opNamed(discover(text), 'f');
    expectProblem(text, op, '@construct', /@construct only applies to methods/);
    expectProblem(text, op, 'this.w num', /'this.w': this.FIELD samples only apply to methods/);
    expectProblem(text, op, 'this.w,', /'this.w' names a field, but f is not a method/);
  });

  it('a method backward list with this.FIELD that has no @sample', () => {
    const text = `class Layer {
${withDoc(['@backward back(this.bias, $dy)', '@sample x num'], 'run(x: number) { return x; }')}
  back() {}
}
`;
    const op = opNamed(discover(text), 'Layer.run');
    expectProblem(text, op, 'this.bias', /'this.bias' has no @sample/);
  });

  it('no $dy for a forward declared to return an array or object; accepted for numbers and unannotated returns', () => {
    const text = [
      withDoc(['@backward b(x)', '@sample x f64[3]'], 'export function typed(x: Float64Array): Float64Array { return x; }'),
      withDoc(['@backward b(x, $y)', '@sample x num[3]'], 'export const arr = (x: number[]): number[] => x;'),
      withDoc(['@backward b(x)', '@sample x num'], 'export function obj(x: number): { mean: number; v: number } { return { mean: x, v: x }; }'),
      withDoc(['@backward b(x)', '@sample x num'], 'export function scalar(x: number): number { return x; }'),
      withDoc(['@backward b(x)', '@sample x num'], 'export function unannotated(x: number) { return x; }'),
      withDoc(['@backward b(x)', '@sample x num'], 'export function maybe(x: number): Float32Array | undefined { return undefined; }'),
      'function b() {}',
    ].join('');
    const r = discover(text);
    expectProblem(text, opNamed(r, 'typed'), '(x)', /the list has no \$dy, but typed returns 'Float64Array'/, 0);
    expectProblem(text, opNamed(r, 'arr'), '(x, $y)', /arr returns 'number\[\]'/);
    expectProblem(text, opNamed(r, 'obj'), '(x)', /obj returns an object/, 1);
    expectProblem(text, opNamed(r, 'maybe'), '(x)', /maybe returns 'Float32Array \| undefined'/, 4);
    assert.deepEqual(opNamed(r, 'scalar').problems, []);
    assert.deepEqual(opNamed(r, 'unannotated').problems, []);
  });

  it('rest and destructured parameters', () => {
    const text =
      withDoc(['@backward fb', '@sample x num'], 'export function f(x: number, ...rest: number[]) { return x; }\nfunction fb() {}') +
      withDoc(['@backward gb'], 'export const g = ({ a, b }: { a: number; b: number }) => a + b;\nfunction gb() {}');
    const r = discover(text);
    expectProblem(text, opNamed(r, 'f'), '...rest', /a rest parameter \(found '\.\.\.rest: number\[\]'\) cannot be sampled/);
    // A destructured parameter without a default: at the pattern, with what to write instead.
    expectProblem(text, opNamed(r, 'g'), '{ a, b }', /a destructured parameter \('\{ a, b \}'\) has no name for @sample/);
  });

  it('bad @tolerance and @seed values, and repeated single tags', () => {
    const cases: [string, string, RegExp][] = [
      ['@tolerance 0', '0\n', /@tolerance: expected a positive relative tolerance/],
      ['@tolerance -1e-3', '-1e-3', /found '-1e-3'/],
      ['@tolerance tight', 'tight', /found 'tight'/],
      ['@tolerance', '@tolerance', /@tolerance needs a positive relative tolerance/],
      ['@tolerance 1e-4 please', 'please', /unexpected 'please' after the value/],
      ['@seed -1', '-1', /@seed: expected an integer from 0 to 4294967295/],
      ['@seed 1.5', '1.5', /found '1.5'/],
      ['@seed 4294967296', '4294967296', /found '4294967296'/],
      ['@seed 1e3', '1e3', /found '1e3'/],
    ];
    for (const [tag, needle, message] of cases) {
      const text = withDoc(['@backward fb', '@sample x num', tag], 'export function f(x: number) { return x; }\nfunction fb() {}');
      const op = opNamed(discover(text), 'f');
      expectProblem(text, op, needle, message, 0);
      assert.equal(op.problems.length, 1, `${tag}: ${JSON.stringify(op.problems)}`);
    }
    const text = withDoc(['@backward fb', '@sample x num', '@seed 1', '@seed 2', '@backward gb'], 'export function f(x: number) { return x; }\nfunction fb() {}\nfunction gb() {}');
    const op = opNamed(discover(text), 'f');
    expectProblem(text, op, '@seed 2', /@seed is given twice/);
    expectProblem(text, op, '@backward gb', /@backward is given twice/);
    assert.equal(op.seed, 1);
    assert.equal(op.backward, 'fb');
  });

  it('declarations the checker cannot reach', () => {
    const text = [
      'export class Valve {',
      withDoc(['@backward sb', '@sample x num'], '  static shut(x: number) { return x; }'),
      withDoc(['@backward gb'], '  get level() { return 1; }'),
      withDoc(['@backward cb', '@sample x num'], '  constructor(x: number) {}'),
      withDoc(['@backward pb'], '  #hidden(x: number) { return x; }'),
      '}',
      'export function outer() {',
      withDoc(['@backward ib', '@sample x num'], '  function inner(x: number) { return x; }'),
      '  return inner;',
      '}',
      withDoc(['@backward nb'], 'export const notAFunction = 3;'),
      withDoc(['@backward db', '@sample x num'], 'export default function (x: number) { return x; }'),
      withDoc(['@backward ab', '@sample x num'], 'export async function later(x: number) { return x; }'),
      'function sb() {} function gb() {} function cb() {} function pb() {} function ib() {} function nb() {} function db() {} function ab() {}',
    ].join('\n');
    const r = discover(text);
    expectProblem(text, opNamed(r, 'Valve.shut'), 'shut', /'shut' is static/);
    expectProblem(text, opNamed(r, 'Valve.level'), 'level', /an accessor cannot be an op/);
    expectProblem(text, opNamed(r, 'Valve.constructor'), 'constructor', /a constructor cannot be an op/);
    expectProblem(text, opNamed(r, 'Valve.#hidden'), '#hidden', /needs a plain name \(not private #/);
    expectProblem(text, opNamed(r, 'inner'), 'inner(', /'inner' is not at the top level of the module/);
    expectProblem(text, opNamed(r, 'notAFunction'), 'notAFunction', /is not bound to a function/);
    // Reachable through the module's default binding.
    assert.deepEqual(opNamed(r, 'default').problems, []);
    expectProblem(text, opNamed(r, 'later'), 'later', /later is async/);
  });

  it('an annotated function overload signature', () => {
    const text = withDoc(['@backward fb', '@sample x num'], 'export function f(x: number): number;\nexport function f(x: number) { return x; }\nfunction fb() {}');
    expectProblem(text, opNamed(discover(text), 'f'), 'f(x: number): number;', /has no body here \(an overload signature/);
  });
});
