// The runner pool with real runner processes: warm reuse, cancellation of queued and running
// jobs, the runner's command line and environment as the operating system sees them, and
// parallel runs across runners.
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { bindingsOf, Checker, listOps } from '../../server/src/core/checker';
import type { OpDescriptor } from '../../server/src/model/types';
import { Bundler } from '../../server/src/sandbox/bundle';
import { COVERAGE_RUNNER_JOBS, RunnerPool, type RunResult } from '../../server/src/sandbox/pool';
import { runnerCommand } from '../../server/src/sandbox/runnerCommand';
import { fixture, settingsWith } from './helpers';

async function loopFixture(): Promise<{ spin: OpDescriptor; cube: OpDescriptor; key: string; code: string }> {
  const file = fixture('hostile', 'loop.ts');
  const listing = listOps(file);
  const spin = listing.ops.find((o) => o.forward === 'spin');
  const cube = listing.ops.find((o) => o.forward === 'cube');
  assert.ok(spin && cube, 'discovery found both ops');
  const bundle = await new Bundler().bundle({ file, text: readFileSync(file, 'utf8'), bindings: listing.ops.flatMap(bindingsOf) });
  assert.ok(bundle.ok, bundle.ok ? '' : bundle.message);
  return { spin, cube, key: bundle.key, code: bundle.code };
}

function verdictOf(r: RunResult): string {
  return 'outcome' in r ? r.outcome.verdict : `error: ${r.error}`;
}

describe('pool: runners', function () {
  this.timeout(60_000);
  let pool: RunnerPool;
  let fx: Awaited<ReturnType<typeof loopFixture>>;
  const settings = settingsWith({ timeLimitMs: 20_000 });
  before(async () => {
    fx = await loopFixture();
  });
  afterEach(() => pool?.dispose());

  it('reuses a warm runner and sends a bundle only once per runner', async () => {
    pool = new RunnerPool({ size: 1 });
    for (let i = 0; i < 3; i++) {
      const r = await pool.run({ bundleKey: fx.key, bundleCode: fx.code, op: fx.cube, settings });
      assert.equal(verdictOf(r), 'pass');
    }
    assert.equal(pool.stats.spawned, 1);
    assert.equal(pool.stats.warmJobs, 2);
    assert.equal(pool.stats.bundlesSent, 1);
  });

  it('replaces a coverage runner after its share of jobs, and every job still gets its coverage', async () => {
    pool = new RunnerPool({ size: 1, coverage: true });
    for (let i = 0; i < COVERAGE_RUNNER_JOBS + 2; i++) {
      const r = await pool.run({ bundleKey: fx.key, bundleCode: fx.code, op: fx.cube, settings });
      assert.equal(verdictOf(r), 'pass');
      assert.ok('outcome' in r && r.coverage && r.coverage.functions.length > 0, `job ${i + 1} has no coverage`);
    }
    assert.equal(pool.stats.spawned, 2);
    assert.equal(pool.stats.crashes, 0);
  });

  it('cancels a running job by killing and replacing its runner; a queued one never starts', async () => {
    pool = new RunnerPool({ size: 1 });
    const controller = new AbortController();
    const running = pool.run({ bundleKey: fx.key, bundleCode: fx.code, op: fx.spin, settings, signal: controller.signal });
    const queued = pool.run({ bundleKey: fx.key, bundleCode: fx.code, op: fx.cube, settings, signal: controller.signal });
    // Let the first job reach its runner before cancelling.
    while (pool.stats.jobsStarted === 0) await new Promise((r) => setTimeout(r, 20));
    await new Promise((r) => setTimeout(r, 200));
    controller.abort();
    const [a, b] = await Promise.all([running, queued]);
    assert.ok('error' in a && a.cause === 'cancelled', JSON.stringify(a));
    assert.ok('error' in b && b.cause === 'cancelled', JSON.stringify(b));
    assert.equal(pool.stats.jobsStarted, 1, 'the queued job never started');
    assert.equal(pool.stats.cancelled, 2);
    const after = await pool.run({ bundleKey: fx.key, bundleCode: fx.code, op: fx.cube, settings });
    assert.equal(verdictOf(after), 'pass');
    assert.equal(pool.stats.spawned, 2, 'the cancelled runner was replaced');
  });

  it('runs with an empty environment, the heap limit and (where available) the permission flag', async () => {
    pool = new RunnerPool({ size: 1 });
    pool.warm(settings.memoryLimitMb);
    const r = await pool.run({ bundleKey: fx.key, bundleCode: fx.code, op: fx.cube, settings });
    assert.equal(verdictOf(r), 'pass');
    const iso = pool.isolation();
    assert.ok(iso);
    const environ = readFileSync(`/proc/${iso.pid}/environ`, 'utf8').split('\0').filter(Boolean);
    // Node adds only its own IPC variables; nothing of ours (PATH, HOME, tokens) may be there.
    for (const entry of environ) assert.match(entry, /^NODE_CHANNEL_/, `unexpected variable ${entry.split('=')[0]}`);
    const argv = readFileSync(`/proc/${iso.pid}/cmdline`, 'utf8').split('\0');
    assert.ok(argv.includes(`--max-old-space-size=${settings.memoryLimitMb}`), argv.join(' '));
    if (iso.permissionFlag) {
      assert.ok(argv.includes(iso.permissionFlag));
      assert.equal(iso.permissionActive, true);
    }
    if (iso.addressSpaceLimitMb) {
      const limits = readFileSync(`/proc/${iso.pid}/limits`, 'utf8');
      const line = limits.split('\n').find((l) => l.startsWith('Max address space')) ?? '';
      assert.match(line, new RegExp(`\\b${iso.addressSpaceLimitMb * 1024 * 1024}\\b`), line);
    }
  });

  it('replaces an idle runner when a job asks for another memory limit', async () => {
    pool = new RunnerPool({ size: 1 });
    const first = await pool.run({ bundleKey: fx.key, bundleCode: fx.code, op: fx.cube, settings: settingsWith({ memoryLimitMb: 512 }) });
    assert.equal(verdictOf(first), 'pass');
    const second = await pool.run({ bundleKey: fx.key, bundleCode: fx.code, op: fx.cube, settings: settingsWith({ memoryLimitMb: 384 }) });
    assert.equal(verdictOf(second), 'pass');
    assert.equal(pool.stats.spawned, 2);
    const iso = pool.isolation();
    assert.equal(iso?.memoryLimitMb, 384);
    const argv = readFileSync(`/proc/${iso?.pid}/cmdline`, 'utf8').split('\0');
    assert.ok(argv.includes('--max-old-space-size=384'), argv.join(' '));
  });

  it('accepts limits that are not whole numbers', async () => {
    pool = new RunnerPool({ size: 1 });
    const r = await pool.run({ bundleKey: fx.key, bundleCode: fx.code, op: fx.cube, settings: settingsWith({ timeLimitMs: 5000.5, memoryLimitMb: 1500.3 }) });
    assert.equal(verdictOf(r), 'pass');
    assert.equal(pool.stats.spawned, 1, 'the runner started on the first try');
  });

  it('runs jobs on two runners at once', async () => {
    pool = new RunnerPool({ size: 2 });
    const jobs = Array.from({ length: 4 }, () => pool.run({ bundleKey: fx.key, bundleCode: fx.code, op: fx.cube, settings }));
    const results = await Promise.all(jobs);
    assert.deepEqual(results.map(verdictOf), ['pass', 'pass', 'pass', 'pass']);
    assert.equal(pool.stats.spawned, 2);
    // At most once per runner (one runner may take every job if the other starts late).
    assert.ok(pool.stats.bundlesSent >= 1 && pool.stats.bundlesSent <= 2, `bundles sent: ${pool.stats.bundlesSent}`);
  });

  it('a runner that cannot start fails the job with the reason, after trying without the optional limits', async () => {
    const logged: string[] = [];
    pool = new RunnerPool({ size: 1, childScript: fixture('no-such-runner.js'), log: (l) => logged.push(l) });
    const r = await pool.run({ bundleKey: fx.key, bundleCode: fx.code, op: fx.cube, settings });
    assert.ok('error' in r && r.cause === 'runner', JSON.stringify(r));
    assert.match(r.error, /the runner process could not start: .*Cannot find module/);
    // First with every limit, then without the permission flag, then without prlimit.
    assert.equal(pool.stats.spawned, 3);
    assert.ok(
      logged.some((l) => /running without the permission model/.test(l)),
      logged.join('\n'),
    );
  });

  it('fails jobs clearly after dispose instead of hanging', async () => {
    pool = new RunnerPool({ size: 1 });
    await pool.dispose();
    const r = await pool.run({ bundleKey: fx.key, bundleCode: fx.code, op: fx.cube, settings });
    assert.ok('error' in r && r.cause === 'closed');
  });
});

describe('pool: runner command line', () => {
  it("keeps only ELECTRON_RUN_AS_NODE when the host is the editor's runtime in Node mode", () => {
    const saved = process.env.ELECTRON_RUN_AS_NODE;
    try {
      process.env.ELECTRON_RUN_AS_NODE = '1';
      const underEditor = runnerCommand({ childScript: '/x/sandbox-child.js', memoryLimitMb: 512, usePermission: true, useAddressLimit: true });
      assert.deepEqual(underEditor.env, { ELECTRON_RUN_AS_NODE: '1' });
      delete process.env.ELECTRON_RUN_AS_NODE;
      const plain = runnerCommand({ childScript: '/x/sandbox-child.js', memoryLimitMb: 512, usePermission: true, useAddressLimit: true });
      assert.deepEqual(plain.env, process.versions.electron ? { ELECTRON_RUN_AS_NODE: '1' } : {});
    } finally {
      if (saved === undefined) delete process.env.ELECTRON_RUN_AS_NODE;
      else process.env.ELECTRON_RUN_AS_NODE = saved;
    }
  });

  it('limits file reads to the runner script and leaves the flag out when told to', () => {
    const withFlag = runnerCommand({ childScript: '/x/sandbox-child.js', memoryLimitMb: 512, usePermission: true, useAddressLimit: false });
    if (withFlag.permissionFlag) assert.ok(withFlag.args.includes('--allow-fs-read=/x/sandbox-child.js'), withFlag.args.join(' '));
    const without = runnerCommand({ childScript: '/x/sandbox-child.js', memoryLimitMb: 512, usePermission: false, useAddressLimit: false });
    assert.equal(without.permissionFlag, undefined);
    assert.ok(!without.args.some((a) => a.includes('permission') || a.startsWith('--allow-fs')), without.args.join(' '));
    assert.equal(without.command, process.execPath);
    assert.equal(without.args[without.args.length - 1], '/x/sandbox-child.js');
  });
});

describe('checker: listing and filtering', function () {
  this.timeout(60_000);

  it('lists ops without starting a runner', () => {
    const checker = new Checker({ settings: settingsWith({}) });
    const listing = listOps(fixture('hostile', 'failures.ts'));
    assert.deepEqual(
      listing.ops.map((o) => o.forward),
      ['recurse', 'throwsError', 'throwsNumber', 'throwsString'],
    );
    assert.equal(checker.stats.pool.spawned, 0);
    return checker.dispose();
  });

  it('checks only ops whose forward name contains the filter, and reports each through onResult', async () => {
    const checker = new Checker({ settings: settingsWith({}) });
    try {
      const seen: string[] = [];
      const results = await checker.checkFile(fixture('hostile', 'failures.ts'), { filter: 'throws', onResult: (r) => seen.push(r.forward ?? '') });
      assert.deepEqual(
        results.map((r) => r.forward),
        ['throwsError', 'throwsNumber', 'throwsString'],
      );
      assert.deepEqual([...seen].sort(), ['throwsError', 'throwsNumber', 'throwsString']);
      for (const r of results) assert.equal(r.file, fixture('hostile', 'failures.ts'));
    } finally {
      await checker.dispose();
    }
  });
});
