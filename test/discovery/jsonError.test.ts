// The JSON grammar check behind `@sample x = JSON`, against the runtime's JSON.parse
// (ECMA-262 §25.5.1, which accepts exactly the JSON texts of ECMA-404 / RFC 8259) as oracle.
import assert from 'node:assert/strict';
import fc from 'fast-check';
import { findJsonSyntaxError } from '../../server/src/discovery/jsonError';

function parses(text: string): boolean {
  try {
    JSON.parse(text);
    return true;
  } catch {
    return false;
  }
}

describe('discovery: JSON grammar check', () => {
  it('accepts what JSON.parse accepts and rejects what it rejects (fast-check, seeded)', () => {
    // Valid texts from fc.json(), then single-character edits that often break them.
    const edited = fc
      .tuple(fc.json(), fc.nat(), fc.constantFrom('', ',', ']', '}', '"', ':', '0', '-', '.', 'e', '\\', ' ', 't', '\n', '\u0001'), fc.boolean())
      .map(([s, k, ch, replace]) => {
        const i = s.length ? k % s.length : 0;
        return s.slice(0, i) + ch + s.slice(replace ? i + 1 : i);
      });
    fc.assert(
      fc.property(fc.oneof(fc.json(), edited, fc.string()), (text) => {
        const err = findJsonSyntaxError(text);
        assert.equal(err === undefined, parses(text), `text ${JSON.stringify(text)}: ours ${JSON.stringify(err)}`);
        if (err) assert.ok(err.offset >= 0 && err.offset <= Math.max(0, text.length - 1), `offset ${err.offset} outside ${JSON.stringify(text)}`);
      }),
      { seed: 20240611, numRuns: 3000 },
    );
  });

  it('names the first failing character (RFC 8259 grammar, positions counted by hand)', () => {
    assert.deepEqual(findJsonSyntaxError('{"a": }'), { offset: 6, message: 'expected a value (number, string, true, false, null, object or array)' });
    assert.deepEqual(findJsonSyntaxError('[1 2]'), { offset: 3, message: "expected ',' or ']'" });
    assert.deepEqual(findJsonSyntaxError('"ab'), { offset: 2, message: 'unterminated string' });
    assert.equal(findJsonSyntaxError('"\\u12G4"')?.offset, 2);
    assert.equal(findJsonSyntaxError(' {"k": [true, null, -0.5e+3, "\\n"]} '), undefined);
  });

  it('survives deep nesting without recursion', () => {
    const deep = '['.repeat(200_000) + ']'.repeat(200_000);
    assert.equal(findJsonSyntaxError(deep), undefined);
    assert.equal(findJsonSyntaxError('['.repeat(200_000))?.message, 'expected a value, found the end');
  });
});
