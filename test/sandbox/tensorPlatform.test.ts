// TensorFlow.js (@tensorflow/tfjs 4.22 from npm, the repository's copy) inside the sandbox with
// no shim in the user's code: the context setup gives the library a platform of context
// functions (server/src/sandbox/tensorPlatform.ts) and none of the host globals it would
// otherwise look for (window, process, WorkerGlobalScope, fetch).
import assert from 'node:assert/strict';
import { Checker } from '../../server/src/core/checker';
import { FIXED_DATE_MS } from '../../server/src/sandbox/contextSetup';
import { TENSOR_PLATFORM_NAME } from '../../server/src/sandbox/tensorPlatform';
import { describeResults, fixture, resultOf, settingsWith } from './helpers';

describe('sandbox: TensorFlow.js runs in the runner context and the isolated interpreter', function () {
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

  it('gives the library nothing that reaches the host: no code from strings, no timers, no fetch', async () => {
    const results = await checker.checkFile(fixture('tensor', 'platform.ts'), { filter: 'probePlatform' });
    const r = resultOf(results, 'probePlatform');
    assert.equal(r.verdict, 'pass', describeResults(results));
    const out = r.output ?? '';
    assert.match(out, /^constructor: threw EvalError: /m, out);
    assert.match(out, /^timer: threw Error: timers are not available/m, out);
    assert.match(out, /^utf8: returned "Quillmere ✓"$/m, out);
    assert.match(out, /^latin1: threw Error: only utf-8 text can be encoded/m, out);
    assert.match(out, /^fetch: rejected: fetching "file:\/\/\/etc\/passwd" is not possible here/m, out);
  });

  it('reads a tensor output back and disposes every tensor a call makes', async () => {
    const results = await checker.checkFile(fixture('tensor', 'platform.ts'), { filter: 'louvreLift' });
    const r = resultOf(results, 'louvreLift');
    assert.equal(r.verdict, 'pass', describeResults(results));
    const counts = (r.output ?? '').trim().split('\n').map(Number);
    assert.ok(counts.length === r.calls.forward && counts.length > 5, `one count per forward call: ${r.output}`);
    // The library holds the same number of tensors at the start of every call: none leaked.
    assert.deepEqual([...new Set(counts)], [counts[0]], r.output);
  });

  it('checks tf.customGrad ops and library-composed forwards through the library gradient', async () => {
    const results = await checker.checkFile(fixture('tensor', 'customGrad.ts'));
    const show = describeResults(results);
    // tanh' = 1 − tanh² (handbook identity): the custom gradient is right.
    assert.equal(resultOf(results, 'softVentLimit').verdict, 'pass', show);
    assert.equal(resultOf(results, 'softVentLimit').gradientSource, 'library');
    assert.equal(resultOf(results, 'softVentLimit').backward, 'library-gradient');
    const doubled = resultOf(results, 'doubledVentLimit');
    assert.equal(doubled.verdict, 'mismatch', show);
    assert.match(doubled.message, /gradient of 'opening' disagrees at opening\[\d\]/);
    assert.equal(resultOf(results, 'paneWarmth').verdict, 'pass', show);
    assert.equal(resultOf(results, 'paneWarmthByHand').verdict, 'pass', show);
    for (const r of results) assert.equal(r.params[0]?.dtype, 'f32', show);
  });

  it('runs the same op in the isolated interpreter', async () => {
    const results = await checker.checkFile(fixture('tensor', 'platform.ts'), { settings: settingsWith({ timeLimitMs: 120_000, isolation: 'interpreter' }) });
    const r = resultOf(results, 'louvreDrag');
    assert.equal(r.isolation, 'interpreter');
    assert.equal(r.verdict, 'pass', describeResults(results));
    const custom = await checker.checkFile(fixture('tensor', 'customGrad.ts'), {
      settings: settingsWith({ timeLimitMs: 120_000, isolation: 'interpreter' }),
      filter: 'VentLimit',
    });
    assert.deepEqual(
      custom.map((x) => [x.forward, x.verdict, x.isolation]),
      [
        ['softVentLimit', 'pass', 'interpreter'],
        ['doubledVentLimit', 'mismatch', 'interpreter'],
      ],
      describeResults(custom),
    );
  });
});
