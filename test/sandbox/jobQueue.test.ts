// The job queue both runners share, on its own (no process): order, settle-once, cancellation
// of a waiting job at once and of a started one through the runner's callback, abort listeners
// removed on settling, and closing.
import assert from 'node:assert/strict';
import { getEventListeners } from 'node:events';
import { JobQueue, closedWhile, type QueuedJob } from '../../server/src/sandbox/jobQueue';
import { emptyStats, type RunJob } from '../../server/src/sandbox/jobTypes';
import { DEFAULT_SETTINGS } from '../../server/src/engine/settings';

function job(signal?: AbortSignal): RunJob {
  // The queue never looks inside the op: an empty descriptor is enough here.
  return { bundleKey: 'k', bundleCode: '', op: {} as RunJob['op'], settings: DEFAULT_SETTINGS, signal };
}

describe('sandbox: the job queue', () => {
  it('hands out jobs in order and settles each once', async () => {
    const stats = emptyStats();
    const queue = new JobQueue(stats, () => assert.fail('nothing was cancelled'));
    const first = queue.submit(job());
    const second = queue.submit(job());
    assert.equal(queue.length, 2);
    const a = queue.take()!;
    const b = queue.take()!;
    assert.ok(a.id < b.id);
    queue.settle(a, { error: 'one', elapsedMs: 1, cause: 'runner' });
    queue.settle(a, { error: 'two', elapsedMs: 2, cause: 'runner' });
    queue.settle(b, { error: 'three', elapsedMs: 3, cause: 'crash' });
    assert.deepEqual(await first, { error: 'one', elapsedMs: 1, cause: 'runner' });
    assert.deepEqual(await second, { error: 'three', elapsedMs: 3, cause: 'crash' });
  });

  it('cancels a waiting job at once and a started one through the runner; listeners go when settled', async () => {
    const stats = emptyStats();
    const started: QueuedJob[] = [];
    const queue = new JobQueue(stats, (j) => started.push(j));
    const controller = new AbortController();
    const running = queue.submit(job(controller.signal));
    const waiting = queue.submit(job(controller.signal));
    const taken = queue.take()!;
    assert.equal(getEventListeners(controller.signal, 'abort').length, 2);
    controller.abort();
    assert.deepEqual(await waiting, { error: 'cancelled', elapsedMs: 0, cause: 'cancelled' });
    assert.deepEqual(started, [taken], 'the runner was asked to stop the started job');
    queue.settle(taken, { error: 'cancelled', elapsedMs: 5, cause: 'cancelled' });
    assert.equal((await running).elapsedMs, 5);
    assert.equal(stats.cancelled, 2);
    assert.equal(queue.length, 0);
    // A job whose signal is already aborted never waits.
    assert.deepEqual(await queue.submit(job(controller.signal)), { error: 'cancelled', elapsedMs: 0, cause: 'cancelled' });
    assert.equal(stats.cancelled, 3);
    const other = new AbortController();
    const done = queue.submit(job(other.signal));
    queue.settle(queue.take()!, { error: 'x', elapsedMs: 0, cause: 'runner' });
    await done;
    assert.equal(getEventListeners(other.signal, 'abort').length, 0);
  });

  it('fails waiting jobs when closed, leaves a started one to its runner, and refuses later ones', async () => {
    const queue = new JobQueue(emptyStats(), () => undefined);
    const started = queue.submit(job());
    const waiting = queue.submit(job());
    const taken = queue.take()!;
    queue.close();
    assert.deepEqual(await waiting, { error: 'the checker was closed before this op ran', elapsedMs: 0, cause: 'closed' });
    queue.settle(taken, closedWhile(taken));
    const result = await started;
    assert.ok('error' in result && result.cause === 'closed' && /while this op ran/.test(result.error), JSON.stringify(result));
    const later = await queue.submit(job());
    assert.ok('error' in later && later.cause === 'closed');
  });
});
