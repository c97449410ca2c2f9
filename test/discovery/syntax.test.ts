// File-level problems (syntax errors from the TypeScript parser) and how positions are counted:
// 1-based lines, columns in UTF-16 code units, CRLF line ends.
import assert from 'node:assert/strict';
import { at, discover, expectProblem, opNamed, withDoc } from './helpers';

describe('discovery: syntax errors and positions', () => {
  it("reports the parser's syntax errors as file problems at their place, and still finds the ops", () => {
    const text = withDoc(['@backward fb', '@sample x num'], 'export function f(x: number) { return x; }\nfunction fb() {}') + 'const broken = (1 + ;\n';
    const r = discover(text);
    assert.equal(r.fileProblems.length, 1, JSON.stringify(r.fileProblems));
    // TypeScript's own diagnostic 1109 for a missing operand.
    assert.equal(r.fileProblems[0]!.message, 'Expression expected.');
    const pos = at(text, ';\n', 0);
    assert.deepEqual([r.fileProblems[0]!.line, r.fileProblems[0]!.column], [pos.line, pos.column]);
    assert.equal(opNamed(r, 'f').problems.length, 0);
  });

  it('an unclosed block is reported at the end of the file', () => {
    const text = 'export function f(x: number) {\n  return x;\n';
    const r = discover(text);
    // TypeScript's diagnostic 1005 "'}' expected." sits at the end of the text.
    assert.deepEqual(
      r.fileProblems.map((p) => [p.line, p.column, p.message]),
      [[3, 1, "'}' expected."]],
    );
    assert.deepEqual(r.ops, []);
  });

  it('counts columns in UTF-16 code units', () => {
    // LSP 3.17 "Position": character offsets are UTF-16 code units by default. U+1D465 (𝑥) is
    // one character but two code units (a surrogate pair, Unicode 15 §3.9), so the bad token
    // after it stands two columns further on than its visible place.
    const text = withDoc(['@backward fb', '@sample 𝑥x f46[2]'], 'export function f(𝑥x: number) { return 0; }\nfunction fb() {}');
    const op = opNamed(discover(text), 'f');
    const p = expectProblem(text, op, 'f46', /unknown element type 'f46'/);
    // ' * @sample ' is 11 code units, '𝑥x ' is 4: the token starts at column 16.
    assert.equal(p.column, 16);
  });

  it('handles CRLF line ends', () => {
    const lf = withDoc(['@backward fb', '@sample x f64[3] banana'], 'export function f(x: Float64Array) { return 0; }\nfunction fb() {}');
    const crlf = lf.replace(/\n/g, '\r\n');
    const a = opNamed(discover(lf), 'f');
    const b = opNamed(discover(crlf), 'f');
    // Same line and column whichever line end the file uses.
    assert.deepEqual(b.problems, a.problems);
    assert.deepEqual(b.tags, a.tags);
    expectProblem(lf, a, 'banana', /unexpected 'banana'/);
  });

  it('returns nothing for an empty file or a file without tags', () => {
    assert.deepEqual(discover(''), { ops: [], fileProblems: [] });
    assert.deepEqual(discover('export const a = 1;\n'), { ops: [], fileProblems: [] });
  });
});
