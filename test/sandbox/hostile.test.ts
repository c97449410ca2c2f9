// Hostile and broken user code through the real Checker: real discovery, real esbuild, real
// runner processes and the real engine. Each bad op must become that op's `error` while the
// host stays up and every other op still runs.
import assert from 'node:assert/strict';
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Checker } from '../../server/src/core/checker';
import { describeResults, fixture, resultOf, settingsWith } from './helpers';

describe('sandbox: an op that never returns', function () {
  this.timeout(60_000);
  // Short enough to keep the suite quick, long enough for a correct op on a loaded 2-core machine.
  const settings = settingsWith({ timeLimitMs: 2500 });
  let checker: Checker;
  before(() => {
    // One runner: the op after the hang can only run if the hung runner was replaced.
    checker = new Checker({ settings, workers: 1 });
  });
  after(() => checker.dispose());

  it('times out, is reported on its own op, and the next op runs on a replacement runner', async () => {
    const results = await checker.checkFile(fixture('hostile', 'loop.ts'));
    const spin = resultOf(results, 'spin');
    assert.equal(spin.verdict, 'error', describeResults(results));
    assert.match(spin.message, /timed out after 2500 ms/);
    assert.equal(spin.failure, 'timed-out', 'the cause is a field, not only words');
    assert.equal(spin.line, 7);
    const cube = resultOf(results, 'cube');
    assert.equal(cube.verdict, 'pass', describeResults(results));
    const stats = checker.stats.pool;
    assert.equal(stats.timeouts, 1);
    assert.ok(stats.spawned >= 2, `a replacement runner was started (spawned ${stats.spawned})`);
  });
});

describe('sandbox: the per-file total time cap', function () {
  this.timeout(60_000);

  it('stops a file whose ops together run past it, and says so on the ops it stopped', async () => {
    // One runner and six ops that each use their whole 500 ms: at least 3,000 ms in total,
    // past the cap of 5 × 500 ms.
    const checker = new Checker({ settings: settingsWith({ timeLimitMs: 500 }), workers: 1 });
    try {
      const results = await checker.checkFile(fixture('hostile', 'spinMany.ts'));
      assert.equal(results.length, 6);
      for (const r of results) assert.equal(r.verdict, 'error');
      const timedOut = results.filter((r) => /^timed out after 500 ms/.test(r.message));
      const capped = results.filter((r) => /reached their total time limit of 2500 ms/.test(r.message));
      assert.ok(timedOut.length >= 1, describeResults(results));
      assert.ok(capped.length >= 1, describeResults(results));
      assert.equal(timedOut.length + capped.length, 6, describeResults(results));
    } finally {
      await checker.dispose();
    }
  });
});

describe('sandbox: an op stuck inside a built-in the vm timeout cannot interrupt', function () {
  this.timeout(60_000);
  let checker: Checker;
  before(() => {
    checker = new Checker({ settings: settingsWith({ timeLimitMs: 1000 }), workers: 1 });
  });
  after(() => checker.dispose());

  it('ends as its own timeout, and the next op runs on a replacement runner', async () => {
    const results = await checker.checkFile(fixture('hostile', 'unstoppable.ts'));
    const stuck = resultOf(results, 'sortForever');
    assert.equal(stuck.verdict, 'error', describeResults(results));
    // Which stops it depends on how long one sort pass takes on the machine at that moment: the
    // vm timeout between passes, or the parent's watchdog inside one (tested on its own, without
    // a race, in supervisor.test.ts with a runner that never answers).
    assert.match(stuck.message, /^timed out after 1000 ms( \(the runner did not stop by itself and was killed\))?$/);
    assert.equal(resultOf(results, 'double').verdict, 'pass', describeResults(results));
    assert.equal(checker.stats.pool.timeouts, 1);
    assert.equal(checker.stats.pool.spawned, 2);
  });
});

describe('sandbox: a module whose top-level code fails', function () {
  this.timeout(60_000);
  let checker: Checker;
  before(() => {
    checker = new Checker({ settings: settingsWith({ timeLimitMs: 2000 }), workers: 1 });
  });
  after(() => checker.dispose());

  it('throwing at load makes every op an error with the message, after one run', async () => {
    const results = await checker.checkFile(fixture('hostile', 'loadThrows.ts'));
    assert.equal(results.length, 2);
    for (const r of results) {
      assert.equal(r.verdict, 'error');
      // Line 3 of the fixture throws; the place comes from the bundle's source map.
      assert.match(r.message, /the module threw while loading: Error: irradiance table is empty \(line 3\)$/);
      assert.equal(r.problems?.[0]?.line, 3, JSON.stringify(r.problems));
    }
    assert.equal(checker.stats.pool.jobsStarted, 1, 'the second op was not run');
  });

  it('hanging at load makes every op a timeout "while loading", after one run', async () => {
    const started = checker.stats.pool.jobsStarted;
    const results = await checker.checkFile(fixture('hostile', 'loadLoops.ts'));
    assert.equal(results.length, 2);
    for (const r of results) {
      assert.equal(r.verdict, 'error');
      assert.match(r.message, /timed out after 2000 ms while loading the module/);
      // The op that ran and the one the failed load spared carry the same cause.
      assert.equal(r.failure, 'load');
    }
    assert.equal(checker.stats.pool.jobsStarted - started, 1, 'the second op was not run');
  });
});

describe('sandbox: allocation bombs', function () {
  this.timeout(120_000);
  // A small heap makes each bomb hit a limit within seconds; the time limit is far above that,
  // so the memory limits (not the clock) must stop them.
  const settings = settingsWith({ memoryLimitMb: 128, timeLimitMs: 60_000 });
  let checker: Checker;
  before(() => {
    checker = new Checker({ settings, workers: 1 });
  });
  after(() => checker.dispose());

  for (const name of ['mapBomb', 'arrayBomb', 'bufferBomb']) {
    it(`${name} becomes an error on its op and the host stays up`, async () => {
      const hostBefore = process.memoryUsage().rss;
      const results = await checker.checkFile(fixture('hostile', 'memory.ts'), { filter: name });
      assert.equal(results.length, 1);
      const r = resultOf(results, name);
      assert.equal(r.verdict, 'error', describeResults(results));
      assert.match(r.message, /memory|allocation failed|Invalid array length|runner process died/i);
      // Killed for its memory, died under it, or V8 refused the allocation inside the op's code.
      assert.ok(['memory-limit', 'runner-crashed', 'threw'].includes(r.failure ?? ''), `failure ${r.failure}`);
      // The host did not take the allocation: it grew by far less than the bomb's size.
      const grownMb = (process.memoryUsage().rss - hostBefore) / 2 ** 20;
      assert.ok(grownMb < 200, `host grew by ${grownMb.toFixed(0)} MiB`);
    });
  }

  it('a correct op of the same file still passes after the bombs', async () => {
    const results = await checker.checkFile(fixture('hostile', 'memory.ts'), { filter: 'double' });
    assert.equal(resultOf(results, 'double').verdict, 'pass', describeResults(results));
  });
});

describe('sandbox: recursion and throws', function () {
  this.timeout(60_000);
  let checker: Checker;
  let results: Awaited<ReturnType<Checker['checkFile']>>;
  before(async () => {
    checker = new Checker({ settings: settingsWith({}) });
    results = await checker.checkFile(fixture('hostile', 'failures.ts'));
  });
  after(() => checker.dispose());

  it('unbounded recursion is an error naming the stack overflow', () => {
    const r = resultOf(results, 'recurse');
    assert.equal(r.verdict, 'error', describeResults(results));
    assert.match(r.message, /call stack/i);
  });

  it('a thrown Error is an error carrying its message', () => {
    const r = resultOf(results, 'throwsError');
    assert.equal(r.verdict, 'error');
    assert.match(r.message, /solar panel angle out of range/);
  });

  it('a thrown number and a thrown string are errors carrying the value', () => {
    const n = resultOf(results, 'throwsNumber');
    assert.equal(n.verdict, 'error');
    assert.match(n.message, /4242/);
    const s = resultOf(results, 'throwsString');
    assert.equal(s.verdict, 'error');
    assert.match(s.message, /inverter offline/);
  });
});

describe('sandbox: attempts to reach the host', function () {
  this.timeout(60_000);
  let checker: Checker;
  let markerDir: string;
  let results: Awaited<ReturnType<Checker['checkFile']>>;
  // What each attempt must meet inside the context itself: nothing there to call, or code
  // generation refused. (A host object leaking in would get further and be stopped only by the
  // permission model, "Access to this API has been restricted": that must not be needed.)
  const expected: Record<string, RegExp> = {
    viaRequire: /is not a function/,
    viaProcess: /Cannot read properties of undefined \(reading 'mainModule'\)/,
    viaConstructorChain: /Code generation from strings disallowed/,
    viaThisConstructor: /Code generation from strings disallowed/,
    viaFunction: /Code generation from strings disallowed/,
    viaFetch: /fetch is not defined/,
    viaExit: /Cannot read properties of undefined \(reading 'exit'\)/,
  };
  const attempts = Object.keys(expected);

  before(async () => {
    markerDir = mkdtempSync(join(tmpdir(), 'gp-escape-'));
    const file = fixture('hostile', 'escape.ts');
    const text = readFileSync(file, 'utf8').replace('__MARKER_DIR__', markerDir);
    checker = new Checker({ settings: settingsWith({}) });
    results = await checker.checkFile(file, { text });
  });
  after(async () => {
    await checker.dispose();
    rmSync(markerDir, { recursive: true, force: true });
  });

  it('no attempt wrote a file', () => {
    assert.deepEqual(readdirSync(markerDir), []);
  });

  for (const name of attempts) {
    it(`${name} fails on its own op`, () => {
      const r = resultOf(results, name);
      assert.equal(r.verdict, 'error', describeResults(results));
      assert.match(r.message, expected[name]);
    });
  }

  it('the host process is untouched (process.exit in the op did not end it)', () => {
    assert.equal(process.exitCode ?? 0, 0);
    assert.equal(results.length, attempts.length);
  });

  it('the runner reports the permission model from inside when the runtime has the flag', () => {
    const iso = checker.isolation();
    assert.ok(iso, 'a runner said hello');
    if (iso.permissionFlag) assert.equal(iso.permissionActive, true, iso.summary);
    else assert.match(iso.summary, /not active/);
  });
});

describe('sandbox: changes to built-ins and globalThis do not leak', function () {
  this.timeout(60_000);
  let checker: Checker;
  before(() => {
    // One runner, so every op below runs in the same process, one after another.
    checker = new Checker({ settings: settingsWith({}), workers: 1 });
  });
  after(() => checker.dispose());

  it('into the next op of the same file', async () => {
    const results = await checker.checkFile(fixture('leaks', 'polluter.ts'));
    assert.equal(resultOf(results, 'halve').verdict, 'pass', describeResults(results));
    assert.equal(resultOf(results, 'square').verdict, 'pass', describeResults(results));
  });

  it('into an op of the next file', async () => {
    const results = await checker.checkFile(fixture('leaks', 'victim.ts'));
    assert.equal(resultOf(results, 'negate').verdict, 'pass', describeResults(results));
    assert.ok(checker.stats.pool.warmJobs >= 2, 'the same warm runner served the later ops');
    assert.equal(checker.stats.pool.spawned, 1);
  });
});

describe('sandbox: console output', function () {
  this.timeout(60_000);
  let checker: Checker;
  before(() => {
    checker = new Checker({ settings: settingsWith({}), workers: 1 });
  });
  after(() => checker.dispose());

  it('is captured per op and the ops still pass', async () => {
    const results = await checker.checkFile(fixture('console.ts'));
    const triple = resultOf(results, 'triple');
    const shift = resultOf(results, 'shift');
    assert.equal(triple.verdict, 'pass', describeResults(results));
    assert.equal(shift.verdict, 'pass', describeResults(results));
    assert.match(triple.output ?? '', /^triple saw 2 panels$/m);
    assert.match(triple.output ?? '', /^warn: tripleBackward called$/m);
    assert.doesNotMatch(triple.output ?? '', /shift saw/);
    assert.match(shift.output ?? '', /^shift saw \{ first: true \}$/m);
    assert.doesNotMatch(shift.output ?? '', /triple/);
  });
});

describe('sandbox: console output after hostile patches', function () {
  this.timeout(60_000);

  it("reads an op's text without calling the join, concat or toString it replaced with endless loops", async () => {
    // The runner reads the text with no time limit (child.ts): a reader that called a patched
    // method would hang until the pool's watchdog, and the op would end as a timeout.
    const checker = new Checker({ settings: settingsWith({ timeLimitMs: 2000 }), workers: 1 });
    try {
      const results = await checker.checkFile(fixture('hostile', 'outputPatches.ts'));
      const halve = resultOf(results, 'halve');
      assert.equal(halve.verdict, 'pass', describeResults(results));
      assert.match(halve.output ?? '', /^halving 3 sluice gates$/m);
      assert.equal(checker.stats.pool.timeouts, 0);
    } finally {
      await checker.dispose();
    }
  });
});

describe('sandbox: a missing file', function () {
  it('is one error entry with no forward, not an exception', async () => {
    const checker = new Checker({ settings: settingsWith({}) });
    try {
      const missing = join(tmpdir(), 'gp-no-such-dir', 'nothing.ts');
      assert.equal(existsSync(missing), false);
      const results = await checker.checkFile(missing);
      assert.equal(results.length, 1);
      assert.equal(results[0].forward, null);
      assert.equal(results[0].verdict, 'error');
      assert.match(results[0].message, /cannot read the file/);
    } finally {
      await checker.dispose();
    }
  });
});
