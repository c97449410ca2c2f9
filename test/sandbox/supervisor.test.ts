// The two kinds of runner (the process pool and the isolated interpreter) share one job queue and
// one supervised process, so they keep the same promises: a job never rejects, even when the
// engine cannot be read; a caller's abort listener is gone once the job settles (a long-lived
// signal must not collect them); the parent's watchdog ends a job whose process never answers;
// and the interpreter's counters reach the Checker's stats.
import assert from 'node:assert/strict';
import { getEventListeners } from 'node:events';
import { readFileSync } from 'node:fs';
import { bindingsOf, Checker, listOps } from '../../server/src/core/checker';
import type { OpDescriptor } from '../../server/src/model/types';
import { Bundler } from '../../server/src/sandbox/bundle';
import { IsolatedRunner } from '../../server/src/sandbox/isolated';
import type { RunJob } from '../../server/src/sandbox/jobTypes';
import { RunnerPool } from '../../server/src/sandbox/pool';
import { fixture, settingsWith } from './helpers';

async function cubeJob(): Promise<Omit<RunJob, 'settings'> & { op: OpDescriptor }> {
  const file = fixture('hostile', 'loop.ts');
  const listing = listOps(file);
  const cube = listing.ops.find((o) => o.forward === 'cube');
  assert.ok(cube, 'discovery found the op');
  const bundle = await new Bundler().bundle({ file, text: readFileSync(file, 'utf8'), bindings: listing.ops.flatMap(bindingsOf) });
  assert.ok(bundle.ok, bundle.ok ? '' : bundle.message);
  return { bundleKey: bundle.key, bundleCode: bundle.code, op: cube };
}

describe('sandbox supervision shared by both runners', function () {
  this.timeout(60_000);
  const settings = settingsWith({ timeLimitMs: 20_000 });
  let job: Awaited<ReturnType<typeof cubeJob>>;
  before(async () => {
    job = await cubeJob();
  });

  for (const kind of ['pool', 'interpreter'] as const) {
    it(`${kind}: a settled job leaves no abort listener on the caller's signal`, async () => {
      const runner = kind === 'pool' ? new RunnerPool({ size: 1 }) : new IsolatedRunner();
      const controller = new AbortController();
      try {
        const first = await runner.run({ ...job, settings, signal: controller.signal });
        assert.ok('outcome' in first && first.outcome.verdict === 'pass', JSON.stringify(first));
        const second = await runner.run({ ...job, settings, signal: controller.signal });
        assert.ok('outcome' in second && second.outcome.verdict === 'pass', JSON.stringify(second));
        assert.equal(getEventListeners(controller.signal, 'abort').length, 0);
        assert.equal(runner.stats.jobsStarted, 2);
        assert.equal(runner.stats.warmJobs, 1, 'the second job reused the process');
      } finally {
        await runner.dispose();
      }
    });

    it(`${kind}: an engine that cannot be read fails the job with the reason instead of rejecting`, async () => {
      const missing = fixture('no-such-engine.js');
      const runner = kind === 'pool' ? new RunnerPool({ size: 1, engineScript: missing }) : new IsolatedRunner({ engineScript: missing });
      try {
        const r = await runner.run({ ...job, settings });
        assert.ok('error' in r && r.cause === 'runner', JSON.stringify(r));
        assert.match(r.error, /the check engine could not be read: .*no-such-engine\.js/);
        assert.equal(runner.stats.spawned, 0);
      } finally {
        await runner.dispose();
      }
    });
  }

  for (const kind of ['pool', 'interpreter'] as const) {
    it(`${kind}: the parent's watchdog ends a job the process never answers, and the next job gets a new process`, async () => {
      const silent = fixture('silentRunner.js');
      const runner = kind === 'pool' ? new RunnerPool({ size: 1, childScript: silent }) : new IsolatedRunner({ workerScript: silent });
      const short = settingsWith({ timeLimitMs: 300 });
      try {
        for (let i = 1; i <= 2; i++) {
          const r = await runner.run({ ...job, settings: short });
          assert.ok('error' in r && r.cause === 'timeout', JSON.stringify(r));
          assert.match(r.error, /^timed out after 300 ms \(the (runner|interpreter) did not stop by itself and was killed\)$/);
          assert.equal(runner.stats.timeouts, i);
          // The pool starts a replacement at once (it stays warm); the interpreter on the next job.
          assert.equal(runner.stats.spawned, kind === 'pool' ? i + 1 : i);
        }
      } finally {
        await runner.dispose();
      }
    });
  }

  it("the interpreter's counters reach the Checker's stats", async () => {
    const checker = new Checker({ settings, workers: 1 });
    try {
      assert.equal(checker.stats.isolated.jobsStarted, 0);
      const results = await checker.checkFile(fixture('hostile', 'loop.ts'), { filter: 'cube', settings: { ...settings, isolation: 'interpreter' } });
      assert.equal(results[0]?.verdict, 'pass', results[0]?.message);
      assert.equal(checker.stats.isolated.spawned, 1);
      assert.equal(checker.stats.isolated.jobsFinished, 1);
      assert.equal(checker.stats.pool.jobsStarted, 0, 'nothing ran in the pool');
    } finally {
      await checker.dispose();
    }
  });
});
