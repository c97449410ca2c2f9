// Coverage of each check through the real Checker: real esbuild bundles and source maps, real
// coverage runners (V8 block coverage through the inspector), real TypeScript ASTs. The
// fixture's line numbers are the expected places (test/fixtures/coverage/branches.ts).
import assert from 'node:assert/strict';
import { mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { bindingsOf, Checker, coverageOf } from '../../server/src/core/checker';
import { discoverOps } from '../../server/src/discovery/index';
import type { CoverageGap, OpCoverage, OpResult } from '../../server/src/model/types';
import { Bundler } from '../../server/src/sandbox/bundle';
import { RunnerPool } from '../../server/src/sandbox/pool';
import { describeResults, fixture, resultOf, settingsWith } from './helpers';

const coverageDir = join(dirname(fixture('trivial.ts')), '..', 'coverage');
const branches = join(coverageDir, 'branches.ts');
const helpers = join(coverageDir, 'helpers.ts');

function collected(r: OpResult): Extract<OpCoverage, { collected: true }> {
  const c = r.coverage;
  assert.ok(c, `${r.forward} has coverage`);
  assert.ok(c.collected, `${r.forward}: ${c.collected ? '' : c.reason}`);
  return c;
}

function gapsIn(r: OpResult, fn: string): CoverageGap[] {
  return collected(r).gaps.filter((g) => g.function === fn);
}

describe('coverage: what each check ran', function () {
  this.timeout(120_000);
  let checker: Checker;
  let results: OpResult[];
  before(async () => {
    checker = new Checker({ settings: settingsWith({}), workers: 1, coverage: true });
    results = await checker.checkFile(branches);
  });
  after(() => checker.dispose());

  it('finds the branch at x > 100 that samples in [-1, 1] cannot reach, at its lines, with the range that would', () => {
    const spill = resultOf(results, 'spill');
    assert.equal(spill.verdict, 'pass', describeResults(results));
    const [gap, ...more] = gapsIn(spill, 'spillBackward');
    assert.equal(more.length, 0);
    assert.deepEqual([gap!.file, gap!.startLine, gap!.endLine, gap!.side], [branches, 20, 20, 'backward']);
    assert.equal(gap!.what, 'if `x[i] > 100`');
    assert.match(gap!.reach ?? '', /x > 100, outside @sample x \[-1, 1\]/);
    // The forward's ternary arm for x > 100, too: column 58 is where `2 * x[i]` starts.
    const [fwd] = gapsIn(spill, 'spill');
    assert.deepEqual([fwd!.startLine, fwd!.startColumn, fwd!.side], [12, 58, 'forward']);
    assert.ok(collected(spill).backward.run < collected(spill).backward.total);
  });

  it('closes the gap when the range is widened to reach it', () => {
    const wide = collected(resultOf(results, 'spillWide'));
    assert.deepEqual(wide.gaps, []);
    assert.equal(wide.backward.run, wide.backward.total);
  });

  it('follows the backward into a helper in another file whose branch never ran', () => {
    const heat = resultOf(results, 'heat');
    const gaps = gapsIn(heat, 'clampedGain');
    assert.deepEqual(
      gaps.map((g) => [g.file, g.startLine, g.side]),
      [[helpers, 5, 'backward']],
    );
    // A helper's own parameter is not an op parameter: its condition gets no range hint.
    assert.equal(gaps[0]!.reach, undefined);
    assert.equal(collected(heat).forward.run, collected(heat).forward.total);
  });

  it('covers a method op', () => {
    const gaps = gapsIn(resultOf(results, 'Louvre.forward'), 'Louvre.backward');
    assert.deepEqual(
      gaps.map((g) => [g.startLine, g.what]),
      [[82, 'if `this.last < 0`']],
    );
    // `this.last` is not a sampled parameter: no range is suggested.
    assert.equal(gaps[0]!.reach, undefined);
  });

  it('covers an arrow-function op and the helper it calls', () => {
    const mist = resultOf(results, 'mist');
    assert.deepEqual(
      gapsIn(mist, 'mistBackward').map((g) => [g.startLine, g.what]),
      [[95, 'right side of `scaleFor(m) ??`']],
    );
    assert.deepEqual(
      gapsIn(mist, 'scaleFor').map((g) => g.startLine),
      [98],
    );
  });

  it('reports the code after an early return', () => {
    const gaps = gapsIn(resultOf(results, 'ramp'), 'rampBackward');
    assert.deepEqual(
      gaps.map((g) => [g.startLine, g.endLine, g.what]),
      [[61, 62, 'after the `if` on line 60']],
    );
  });

  it('never changes a verdict: the same results with coverage off', async () => {
    const plain = new Checker({ settings: settingsWith({}), workers: 1 });
    try {
      const without = await plain.checkFile(branches);
      const strip = (r: OpResult): unknown => [r.forward, r.verdict, r.message, r.params.map((p) => [p.name, p.verdict, p.maxRelError])];
      assert.deepEqual(results.map(strip), without.map(strip));
      assert.equal(resultOf(results, 'triple').verdict, 'mismatch');
      assert.ok(without.every((r) => r.coverage === undefined));
    } finally {
      await plain.dispose();
    }
  });

  it('never leaks across ops: an op run after one that reached the branch still misses it', async () => {
    // One coverage runner: spillWide (which reaches x > 100) runs first, then spill on the same process.
    await checker.checkFile(branches, { filter: 'spillWide' });
    const again = await checker.checkFile(branches, { filter: 'spill' });
    assert.equal(gapsIn(resultOf(again, 'spill'), 'spillBackward').length, 1);
    assert.deepEqual(collected(resultOf(again, 'spillWide')).gaps, []);
  });
});

describe('coverage: kept only for a run that repeated the check', function () {
  this.timeout(60_000);

  it('claims nothing when the coverage run failed, or made other calls than the verdict run', async () => {
    const text = readFileSync(branches, 'utf8');
    const op = discoverOps(branches, text).ops.find((o) => o.forward === 'spill')!;
    const bundle = await new Bundler().bundle({ file: branches, text, bindings: bindingsOf(op) });
    assert.ok(bundle.ok);
    const pool = new RunnerPool({ size: 1, coverage: true });
    try {
      const run = await pool.run({ bundleKey: bundle.key, bundleCode: bundle.code, op, settings: settingsWith({}) });
      assert.ok('outcome' in run && run.coverage);
      const same = coverageOf(op, run.outcome, run, text, bundle.code, bundle.segments);
      assert.ok(same.collected);
      const otherCalls = { ...run.outcome, calls: { ...run.outcome.calls, forward: run.outcome.calls.forward + 1 } };
      const differs = coverageOf(op, otherCalls, run, text, bundle.code, bundle.segments);
      assert.deepEqual(differs.collected, false);
      assert.match(differs.collected ? '' : differs.reason, /did not repeat the check exactly/);
      const killed = coverageOf(op, run.outcome, { error: 'the runner process died (signal SIGKILL)', elapsedMs: 1, cause: 'crash' }, text, bundle.code, bundle.segments);
      assert.match(killed.collected ? '' : killed.reason, /^not collected: the coverage run failed/);
    } finally {
      await pool.dispose();
    }
  });
});

describe('coverage: hostile ops', function () {
  this.timeout(120_000);

  it('a runner killed mid-check gives its op no coverage, and the next op correct coverage', async () => {
    const checker = new Checker({ settings: settingsWith({ timeLimitMs: 2500 }), workers: 1, coverage: true });
    try {
      const results = await checker.checkFile(fixture('hostile', 'loop.ts'));
      const spin = resultOf(results, 'spin');
      assert.equal(spin.verdict, 'error');
      assert.equal(spin.coverage, undefined);
      const cube = collected(resultOf(results, 'cube'));
      assert.deepEqual(cube.gaps, []);
      assert.ok(cube.backward.total > 0);
    } finally {
      await checker.dispose();
    }
  });

  it('coverage runners stop every escape attempt inside the context, as the permission runners do', async () => {
    // The coverage runners have no permission model (it denies the inspector), so the
    // context's own hardening is all there is: run every attempt there, to its end.
    const markerDir = mkdtempSync(join(tmpdir(), 'gp-cov-escape-'));
    const file = fixture('hostile', 'escape.ts');
    const text = readFileSync(file, 'utf8').replace('__MARKER_DIR__', markerDir);
    const ops = discoverOps(file, text).ops;
    const bundle = await new Bundler().bundle({ file, text, bindings: ops.flatMap(bindingsOf) });
    assert.ok(bundle.ok);
    const pool = new RunnerPool({ size: 1, coverage: true });
    try {
      for (const op of ops) {
        const run = await pool.run({ bundleKey: bundle.key, bundleCode: bundle.code, op, settings: settingsWith({}) });
        const failed = 'error' in run || run.outcome.verdict === 'error';
        assert.ok(failed, `${op.forward} must fail`);
        const message = 'error' in run ? run.error : run.outcome.message;
        assert.doesNotMatch(message, /Access to this API has been restricted/, `${op.forward} met only the permission model`);
      }
      assert.deepEqual(readdirSync(markerDir), []);
      assert.equal(pool.isolation()?.permissionActive, false, 'coverage runners run without the permission model');
    } finally {
      await pool.dispose();
      rmSync(markerDir, { recursive: true, force: true });
    }
  });
});
