// What user code finds in its vm context: Math.random seeded by the op's seed, a fixed clock,
// and no WebAssembly, shared memory, Atomics, process, require or timers.
import assert from 'node:assert/strict';
import { Checker } from '../../server/src/core/checker';
import { FIXED_DATE_MS } from '../../server/src/sandbox/contextSetup';
import type { OpResult } from '../../server/src/model/types';
import { describeResults, fixture, resultOf, settingsWith } from './helpers';

function line(r: OpResult, key: string): string[] {
  const found = (r.output ?? '').split('\n').find((l) => l.startsWith(`${key} `));
  assert.ok(found, `no "${key}" line in output of ${r.forward}: ${JSON.stringify(r.output)}`);
  return found.split(' ').slice(1);
}

describe('sandbox: the context user code runs in', function () {
  this.timeout(60_000);
  let first: OpResult[];
  let second: OpResult[];

  before(async () => {
    // Two separate Checkers (separate runner processes): the draws must still agree.
    for (const round of [1, 2]) {
      const checker = new Checker({ settings: settingsWith({}) });
      try {
        const results = await checker.checkFile(fixture('environment.ts'));
        if (round === 1) first = results;
        else second = results;
      } finally {
        await checker.dispose();
      }
    }
  });

  it('Math.random is seeded by the op: same seed, same draws; another seed, other draws', () => {
    const a1 = line(resultOf(first, 'atDefaultSeed'), 'random').map(Number);
    const a2 = line(resultOf(second, 'atDefaultSeed'), 'random').map(Number);
    const b1 = line(resultOf(first, 'atSeed99'), 'random').map(Number);
    assert.deepEqual(a1, a2);
    assert.notDeepEqual(a1, b1);
    for (const v of [...a1, ...b1]) assert.ok(v >= 0 && v < 1, `draw ${v} outside [0, 1)`);
    assert.notEqual(a1[0], a1[1], 'successive draws differ');
  });

  it('the clock is fixed', () => {
    const [now, iso] = line(resultOf(first, 'atDefaultSeed'), 'now');
    assert.equal(Number(now), FIXED_DATE_MS);
    assert.equal(iso, new Date(FIXED_DATE_MS).toISOString());
  });

  it('WebAssembly, shared memory, Atomics, process, require and timers are absent', () => {
    assert.deepEqual(line(resultOf(first, 'atDefaultSeed'), 'absent'), Array(6).fill('undefined'));
  });

  it('self is the global object, as packages written for browsers and workers expect', () => {
    assert.deepEqual(line(resultOf(first, 'atDefaultSeed'), 'self'), ['true']);
  });

  it('an op that waits on Atomics is an error, not a hang', () => {
    const r = resultOf(first, 'blocksOnAtomics');
    assert.equal(r.verdict, 'error', describeResults(first));
    assert.match(r.message, /SharedArrayBuffer is not defined|Atomics is not defined/);
  });

  it('ops that use neither still pass', () => {
    assert.equal(resultOf(first, 'atDefaultSeed').verdict, 'pass', describeResults(first));
    assert.equal(resultOf(first, 'atSeed99').verdict, 'pass', describeResults(first));
  });
});
