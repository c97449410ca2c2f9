// TensorFlow.js (@tensorflow/tfjs 4.22 from npm, the repository's copy) inside the sandbox with
// no shim in the user's code: the context setup gives the library a platform of context
// functions (server/src/sandbox/tensorPlatform.ts) and none of the host globals it would
// otherwise look for (window, process, WorkerGlobalScope, fetch).
import assert from 'node:assert/strict';
import { Checker } from '../../server/src/core/checker';
import { FIXED_DATE_MS } from '../../server/src/sandbox/contextSetup';
import { TENSOR_PLATFORM_NAME } from '../../server/src/sandbox/tensorPlatform';
import { describeResults, fixture, resultOf, settingsWith } from './helpers';

describe('sandbox: TensorFlow.js runs in the runner context', function () {
  this.timeout(180_000);
  let checker: Checker;
  before(() => {
    checker = new Checker({ settings: settingsWith({ timeLimitMs: 60_000 }), workers: 1 });
  });
  after(async () => {
    await checker.dispose();
  });

  it('checks an op whose forward computes with the library, and the library sees only our platform', async () => {
    const results = await checker.checkFile(fixture('tensor', 'platform.ts'));
    // d/dx x² = 2x: the hand-written backward of the library's square must pass.
    assert.equal(resultOf(results, 'louvreDrag').verdict, 'pass', describeResults(results));
    const twice = resultOf(results, 'twice');
    assert.equal(twice.verdict, 'pass', describeResults(results));
    const firstLine = (twice.output ?? '').split('\n')[0] ?? '';
    const seen = JSON.parse(firstLine) as Record<string, unknown>;
    assert.deepEqual(seen, {
      platform: TENSOR_PLATFORM_NAME,
      backend: 'cpu',
      window: 'undefined',
      process: 'undefined',
      workerScope: 'undefined',
      fetch: 'undefined',
      now: FIXED_DATE_MS,
    });
  });

  it('runs the same op in the isolated interpreter', async () => {
    const results = await checker.checkFile(fixture('tensor', 'platform.ts'), { settings: settingsWith({ timeLimitMs: 120_000, isolation: 'interpreter' }) });
    const r = resultOf(results, 'louvreDrag');
    assert.equal(r.isolation, 'interpreter');
    assert.equal(r.verdict, 'pass', describeResults(results));
  });
});
