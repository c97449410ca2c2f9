// A slow forward under a short time limit, through the real CLI and runner: the engine stops
// itself and reports how far it got (stoppedAtTimeLimit), never the sandbox's watchdog kill
// ("timed out"). Asserts the kind of result only, so a faster or slower machine changes nothing
// but how far the check got.

import assert from 'node:assert/strict';
import type { Report } from '../../server/src/model/types';
import { runCli, SPAWN_LIMIT_MS } from '../helpers/cli';

describe('a slow forward under a short time limit (spawned CLI)', function () {
  this.timeout(2 * SPAWN_LIMIT_MS);

  it("ends in the engine's own time-limit stop, not a watchdog kill", async () => {
    const run = await runCli(['check', 'test/fixtures/cli/slowProbes', '--time-limit', '3000', '--no-coverage', '--json', '--allow-unfinished']);
    assert.equal(run.code, 0, run.stdout + run.stderr);
    const pair = (JSON.parse(run.stdout) as Report).pairs[0]!;
    assert.equal(pair.verdict, 'inconclusive', JSON.stringify(pair));
    assert.doesNotMatch(pair.message, /timed out/, JSON.stringify(pair));
    const stop = pair.stoppedAtTimeLimit;
    assert.ok(stop, JSON.stringify(pair));
    assert.equal(stop.param, 'z');
    assert.equal(stop.timeLimitMs, 3000);
  });
});
