// The engine rule under attack: an op's module replaces the array iterator, Array.prototype and
// typed-array methods and Math functions before the engine runs in the same context. The engine
// uses only the built-ins it captured at load and indexed loops (enforced by the lint rule in
// eslint.config.mjs), so the verdicts must be the ones the unpatched code earns: the correct op
// passes, the wrong backward is a mismatch on its parameter. The expected verdicts follow from
// the product and sum rules on the fixture's own formulas.
import assert from 'node:assert/strict';
import { Checker } from '../../server/src/core/checker';
import { describeResults, fixture, resultOf, settingsWith } from '../sandbox/helpers';

describe('hostile: a module that replaces the array iterator and array methods', function () {
  this.timeout(120_000);
  let checker: Checker;
  before(() => {
    checker = new Checker({ settings: settingsWith({}), workers: 1 });
  });
  after(() => checker.dispose());

  it('still gets correct verdicts, with the banded op checked by grouped columns', async () => {
    const results = await checker.checkFile(fixture('hostile', 'arrayPatches.ts'));
    const report = describeResults(results);
    const row = resultOf(results, 'pipeRow');
    assert.equal(row.verdict, 'pass', report);
    // The grouped method is what runs methodChoice's colour count (the `for ... of` it once had).
    assert.equal(row.params[0]?.method, 'grouped', report);
    const wrong = resultOf(results, 'pipeRowWrong');
    assert.equal(wrong.verdict, 'mismatch', report);
    assert.equal(wrong.params[0]?.verdict, 'mismatch', report);
    const mix = resultOf(results, 'pipeMix');
    assert.equal(mix.verdict, 'pass', report);
    assert.deepEqual(
      mix.params.map((p) => p.shape),
      [[3, 4], [4]],
      report,
    );
  });
});
