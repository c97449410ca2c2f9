// The one "did you mean" rule (server/src/text/nearestName.ts) against textbook distances, and
// the same suggestion for the same slip in every place that asks (tag, project-file key, flag).
import assert from 'node:assert/strict';
import { parseArgs } from '../../server/src/cli/args';
import { discoverOps } from '../../server/src/discovery/index';
import { editDistance, nearestName } from '../../server/src/text/nearestName';

describe('text: edit distance and the nearest known name', () => {
  it('gives the textbook distances', () => {
    // kitten → sitting: 3 (the usual Levenshtein example, from memory).
    assert.equal(editDistance('kitten', 'sitting'), 3);
    // A swap of two neighbours costs 1 (Damerau's rule); "ca" → "abc" is 3 under optimal string
    // alignment, which edits no substring twice (Damerau–Levenshtein without that rule gives 2; from memory).
    assert.equal(editDistance('tolerence', 'tolerance'), 1);
    assert.equal(editDistance('sede', 'seed'), 1);
    assert.equal(editDistance('ca', 'abc'), 3);
    assert.equal(editDistance('', 'seed'), 4);
  });

  it('suggests within two edits, ignoring case, the first of equals', () => {
    assert.equal(nearestName('Tolerence', ['seed', 'tolerance']), 'tolerance');
    assert.equal(nearestName('memoryLimit', ['memoryLimitMb', 'timeLimitMs']), 'memoryLimitMb');
    assert.equal(nearestName('fixme', ['fixed', 'samples']), 'fixed');
    assert.equal(nearestName('zzz', ['seed', 'fixed']), undefined);
    assert.equal(nearestName('ab', ['ax', 'ay']), 'ax');
    assert.equal(nearestName('seeed', ['seed'], 0), undefined);
  });

  it('gives the same answer to the same slip as a tag keyword and as a CLI flag', () => {
    // A swapped pair of letters in `avoid` (a @sample keyword) and in `--seed` (a flag).
    const text =
      '/**\n * @backward gBack\n * @sample x f64[3] aviod 0\n */\nexport function g(x: Float64Array) { return x; }\nexport function gBack(x: Float64Array, dy: Float64Array) { return dy; }\n';
    const problems = discoverOps('/tmp/slip.ts', text)
      .ops[0]!.problems.map((p) => p.message)
      .join('\n');
    assert.match(problems, /did you mean 'avoid'\?/);
    assert.throws(() => parseArgs(['check', '--sede', '1']), /unknown flag --sede \(did you mean --seed\?\)/);
  });
});
