// Coverage through the real command line: the detail line under an op with gaps, the JSON
// report's `coverage`, SARIF notes of their own rule, JUnit's <system-out> and failure,
// --fail-on-unreached and --no-coverage.
// Fixture: test/fixtures/coverage (its line numbers are the expected places).

import assert from 'node:assert/strict';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Report } from '../../server/src/model/types';
import { runCli } from '../helpers/cli';
import { sarifViolations } from './helpers/sarifShape';
import { findAll, parseXml } from './helpers/xml';

const BRANCHES = 'test/fixtures/coverage/branches.ts';

describe('coverage through the command line', function () {
  this.timeout(180_000);

  it('says under the op where its backward was never reached, and which range would reach it', async () => {
    const run = await runCli(['check', BRANCHES, '--filter', 'spill', '--no-color']);
    assert.equal(run.code, 0, run.stderr);
    assert.ok(run.stdout.includes('never reached during the check: test/fixtures/coverage/branches.ts:20 in `spillBackward` (if `x[i] > 100`)'), run.stdout);
    assert.match(run.stdout, /runs only when an element of x > 100, outside @sample x \[-1, 1\]/);
    assert.match(run.stdout, /coverage: backward 3 of 4 blocks ran/);
  });

  it('writes the gaps to the JSON report with paths relative to the current folder', async () => {
    const run = await runCli(['check', BRANCHES, '--filter', 'heat', '--json']);
    const report = JSON.parse(run.stdout) as Report;
    const c = report.pairs[0]!.coverage;
    assert.ok(c && c.collected);
    assert.deepEqual(
      c.gaps.map((g) => [g.file, g.startLine, g.endLine, g.function, g.side]),
      [['test/fixtures/coverage/helpers.ts', 5, 5, 'clampedGain', 'backward']],
    );
  });

  it('fails the run on unreached backward code only when asked', async () => {
    assert.equal((await runCli(['check', BRANCHES, '--filter', 'heat'])).code, 0);
    assert.equal((await runCli(['check', BRANCHES, '--filter', 'heat', '--fail-on-unreached'])).code, 1);
    // spillWide reaches every branch: nothing to fail on.
    assert.equal((await runCli(['check', BRANCHES, '--filter', 'spillWide', '--fail-on-unreached'])).code, 0);
  });

  it('puts each gap in SARIF as a note of the rule unreached-code, at the gap', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'gp-cov-sarif-'));
    try {
      const file = join(dir, 'out.sarif');
      await runCli(['check', BRANCHES, '--filter', 'heat', '--sarif', file]);
      const log = JSON.parse(readFileSync(file, 'utf8')) as { runs: Array<{ results: Array<Record<string, any>> }> };
      assert.deepEqual(sarifViolations(log), []);
      const notes = log.runs[0]!.results.filter((r) => r['ruleId'] === 'unreached-code');
      assert.equal(notes.length, 1);
      assert.equal(notes[0]!['level'], 'note');
      const loc = notes[0]!['locations'][0].physicalLocation;
      assert.equal(loc.artifactLocation.uri, 'test/fixtures/coverage/helpers.ts');
      assert.equal(loc.region.startLine, 5);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it("writes the gaps to JUnit: in the test case's <system-out>, and as a failure with --fail-on-unreached", async () => {
    const dir = mkdtempSync(join(tmpdir(), 'gp-cov-junit-'));
    try {
      const file = join(dir, 'out.xml');
      // XML 1.0 read back by test/cli/helpers/xml.ts (W3C XML 1.0, 5th ed.).
      await runCli(['check', BRANCHES, '--filter', 'heat', '--junit', file]);
      const plain = findAll(parseXml(readFileSync(file, 'utf8')), 'testcase');
      assert.equal(plain.length, 1);
      assert.deepEqual(findAll(plain[0]!, 'failure'), []);
      const out = findAll(plain[0]!, 'system-out')[0]?.text ?? '';
      assert.ok(out.includes('never reached during the check: test/fixtures/coverage/helpers.ts:5 in `clampedGain`'), out);

      const strictRun = await runCli(['check', BRANCHES, '--filter', 'heat', '--junit', file, '--fail-on-unreached']);
      assert.equal(strictRun.code, 1);
      const failures = findAll(parseXml(readFileSync(file, 'utf8')), 'failure');
      assert.equal(failures.length, 1, 'the exit code and the JUnit file agree');
      assert.equal(failures[0]!.attributes['type'], 'unreached-code');
      assert.ok(failures[0]!.text.includes('helpers.ts:5'), failures[0]!.text);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('collects nothing with --no-coverage, and says so for the isolated interpreter', async () => {
    const off = JSON.parse((await runCli(['check', BRANCHES, '--filter', 'heat', '--json', '--no-coverage'])).stdout) as Report;
    assert.equal(off.pairs[0]!.coverage, undefined);
    const isolated = JSON.parse((await runCli(['check', BRANCHES, '--filter', 'heat', '--json', '--isolated'])).stdout) as Report;
    assert.deepEqual(isolated.pairs[0]!.coverage, { collected: false, reason: 'not collected: the op ran in the isolated interpreter, which does not record coverage' });
  });
});
