// JSON with comments for gradient-probe.json: blanking comments and trailing commas must leave a
// text that JSON.parse (RFC 8259) reads as the same value as the plain JSON it was written from,
// with every other character, and so every error position, where it was.

import assert from 'node:assert/strict';
import { blankJsoncExtras } from '../../server/src/project/jsonc';

describe('JSON with comments', () => {
  const cases: [string, string, unknown][] = [
    ['line and block comments', '// head\n{ /* a */ "seed": 3 // tail\n}', { seed: 3 }],
    ['trailing commas in objects and arrays', '{ "exclude": ["a/**", "b/**",], "seed": 1, }', { exclude: ['a/**', 'b/**'], seed: 1 }],
    ['comment markers inside strings stay', '{ "exclude": ["a//b/**", "/* not a comment */"] }', { exclude: ['a//b/**', '/* not a comment */'] }],
    ['escaped quotes inside strings', '{ "k": "say \\"//\\" here" }', { k: 'say "//" here' }],
    ['a comma before a comment before the brace', '{ "seed": 2, // last\n}', { seed: 2 }],
    ['a comment at the end without a newline', '{ "seed": 4 } // done', { seed: 4 }],
  ];
  for (const [name, text, expected] of cases) {
    it(name, () => {
      const blanked = blankJsoncExtras(text);
      assert.equal(blanked.length, text.length, 'positions are kept');
      assert.deepEqual(blanked.split('\n').length, text.split('\n').length, 'lines are kept');
      assert.deepEqual(JSON.parse(blanked), expected);
    });
  }

  it('leaves plain JSON unchanged, and a comma between values alone', () => {
    const plain = '{ "a": [1, 2, 3], "b": { "c": "d" } }';
    assert.equal(blankJsoncExtras(plain), plain);
  });

  it('blanks an unterminated block comment to the end, so the parser reports the missing brace', () => {
    assert.throws(() => JSON.parse(blankJsoncExtras('{ "seed": 1 /* open')), SyntaxError);
  });
});
