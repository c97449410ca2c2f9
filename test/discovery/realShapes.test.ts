// Common TypeScript shapes (docs/code-shapes.md): supported ones become ops
// with the right target; refused ones get one problem at the right place saying what to write.
import assert from 'node:assert/strict';
import { DEFAULT_EXPORT_BINDING } from '../../server/src/model/types';
import { at, discover, expectProblem, opNamed, withDoc } from './helpers';

describe('discovery: shapes of real code', () => {
  it('a parameter with a default value needs no @sample and is marked so', () => {
    // Shape: `gain = 1.75` and `{ sharpness = 2 }: Opts = {}` left to their defaults.
    const text = withDoc(
      ['@backward fBack', '@sample x f64[3]'],
      'export function f(x: Float64Array, gain = 1.75, { sharpness = 2 }: Opts = {}) { return x; }\nexport function fBack(x: Float64Array, gain: number, o: Opts, dy: Float64Array) { return dy; }',
    );
    const op = opNamed(discover(text), 'f');
    assert.deepEqual(op.problems, []);
    assert.deepEqual(
      op.params.map((p) => [p.name, p.hasDefault === true, p.sample === undefined]),
      [
        ['x', false, false],
        ['gain', true, true],
        ['{ sharpness = 2 }', true, true],
      ],
    );
  });

  it('a destructured parameter without a default is refused at the pattern, saying what to write', () => {
    // Shape: `{ sharpness, offset }: Opts` with nothing to sample it by.
    const text = withDoc(
      ['@backward fBack', '@sample x f64[3]'],
      'export function f(x: Float64Array, { sharpness, offset }: Opts) { return x; }\nexport function fBack(...a: unknown[]) { return a; }',
    );
    const p = expectProblem(text, opNamed(discover(text), 'f'), '{ sharpness, offset }', /destructured parameter .* has no name for @sample: give it a default value/);
    assert.match(p.message, /@sample opts = JSON/);
  });

  it('methods of a top-level object literal are ops called on the object, their backward found beside them', () => {
    // Shape: `export const ops = { f(x) {}, fBackward(x, dy) {} }` and an arrow-valued member.
    const text =
      'export const ops = {\n  /**\n   * @backward fBackward\n   * @sample x f64[2]\n   */\n  f(x: Float64Array) { return x; },\n  fBackward(x: Float64Array, dy: Float64Array) { return dy; },\n  /**\n   * @backward helper\n   * @sample x num\n   */\n  g: (x: number) => x * x,\n};\nexport function helper(x: number, dy: number) { return 2 * x * dy; }\n';
    const r = discover(text);
    const f = opNamed(r, 'ops.f');
    assert.deepEqual(f.problems, []);
    assert.deepEqual(f.target, { kind: 'function', forwardName: 'f', backwardName: 'fBackward', backwardIsMethod: true, objectName: 'ops' });
    const g = opNamed(r, 'ops.g');
    assert.deepEqual(g.problems, []);
    assert.equal(g.target.backwardIsMethod, false, 'a top-level backward is called on its own');
  });

  it('an anonymous default export is an op reached through the default binding', () => {
    // Shape: `export default function (h) {}`.
    const text = withDoc(
      ['@backward back', '@sample h f64[2]'],
      'export default function (h: Float64Array) { return h; }\nexport function back(h: Float64Array, dy: Float64Array) { return dy; }',
    );
    const op = opNamed(discover(text), 'default');
    assert.deepEqual(op.problems, []);
    assert.equal(op.target.forwardName, DEFAULT_EXPORT_BINDING);
    assert.deepEqual([op.line, op.column], [at(text, 'default').line, at(text, 'default').column]);
  });

  it('`@sample this.#w` is refused at the `#`, with the private-field alternative', () => {
    // Shape: a `#private` field sampled like a public one.
    const text =
      'export class L {\n  #w = new Float64Array(2);\n  /**\n   * @backward back\n   * @sample x f64[2]\n   * @sample this.#w f64[2]\n   */\n  f(x: Float64Array) { return x; }\n  back(dy: Float64Array) { return dy; }\n}\n';
    expectProblem(text, opNamed(discover(text), 'L.f'), '#w f64', /'this\.#w' is a private \(#\) field: .*declare it `private w`/);
  });

  it('a class with #private members gets a fresh instance per backward call (its state cannot be snapshot)', () => {
    // Shape: a layer keeping its gradient accumulator in `#gradW`.
    const text =
      'export class L {\n  #gradW = new Float64Array(2);\n  /**\n   * @backward back\n   * @sample x f64[2]\n   */\n  f(x: Float64Array) { return x; }\n  back(dy: Float64Array) { return dy; }\n}\nexport class M extends L {\n  /**\n   * @backward back\n   * @sample x f64[2]\n   */\n  g(x: Float64Array) { return x; }\n}\nexport class P {\n  /**\n   * @backward back\n   * @sample x f64[2]\n   */\n  f(x: Float64Array) { return x; }\n  back(dy: Float64Array) { return dy; }\n}\n';
    const r = discover(text);
    assert.equal(opNamed(r, 'L.f').target.renewInstance, true);
    assert.equal(opNamed(r, 'M.g').target.renewInstance, true, 'inherited from a same-file base');
    assert.equal(opNamed(r, 'P.f').target.renewInstance, undefined);
  });

  it('a @backward block on a class is reported once, at the class name', () => {
    // Shape: the op's block written above `class` instead of above its forward method.
    const text = withDoc(
      ['@backward backward', '@sample x f64[3]'],
      'export class Lamp {\n  forward(x: Float64Array) { return x; }\n  backward(dy: Float64Array) { return dy; }\n}',
    );
    const op = opNamed(discover(text), 'Lamp');
    assert.equal(op.problems.length, 1, JSON.stringify(op.problems));
    expectProblem(text, op, 'Lamp', /the tags are on the class 'Lamp', not on a method/);
  });

  it("`@word` inside a description's prose is text, not a tag", () => {
    // Shape: prose naming a tag mid-line ("uses @seed values", "see @samples").
    const text = withDoc(
      ['Mixes the feed; uses @seed values from the log, see @samples in the notes.', '@backward fBack', '@sample x f64[3]'],
      'export function f(x: Float64Array) { return x; }\nexport function fBack(x: Float64Array, dy: Float64Array) { return dy; }',
    );
    const op = opNamed(discover(text), 'f');
    assert.deepEqual(op.problems, []);
    assert.deepEqual(
      op.tags.map((t) => t.tag),
      ['backward', 'sample'],
    );
    assert.equal(op.seed, undefined);
  });
});
