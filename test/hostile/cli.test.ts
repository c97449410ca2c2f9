// The hostile workspace through the real CLI (`node bin/gradient-probe.js check … --json`):
// every bad op ends as its own error (or inconclusive) with a message that says what happened
// and where, every correct op beside it still passes, --json stdout holds the report and
// nothing else, no escape attempt writes a file, and the limits (per-op time and memory, output
// size, per-file total time) hold with their flags and settings.
import assert from 'node:assert/strict';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { OpResult, Report } from '../../server/src/model/types';
import { reportViolations } from '../cli/helpers/reportShape';
import { expectedLine, HOST_GLOBALS, HOSTILE_CASES } from './cases';
import { copyHostileWorkspace, runCli, type CliRun, type HostileCopy } from './workspace';

function parseReport(run: CliRun): Report {
  let report: Report;
  try {
    report = JSON.parse(run.stdout) as Report;
  } catch (err) {
    throw new Error(`stdout is not one JSON report (${(err as Error).message}); stderr: ${run.stderr}\nstdout: ${run.stdout.slice(0, 2000)}`);
  }
  assert.deepEqual(reportViolations(report), []);
  return report;
}

function pairOf(report: Report, file: string, forward: string): OpResult {
  const found = report.pairs.find((p) => p.file.endsWith(file) && p.forward === forward);
  if (!found) throw new Error(`no result for ${file} ${forward}; got ${report.pairs.map((p) => `${p.file}:${p.forward}`).join(', ')}`);
  return found;
}

function show(r: OpResult): string {
  return `${r.file}:${r.line} ${r.forward}: ${r.verdict} — ${r.message}${r.problems ? ` ${JSON.stringify(r.problems)}` : ''}`;
}

describe('hostile workspace through the CLI', function () {
  this.timeout(180_000);
  let ws: HostileCopy;
  let run: CliRun;
  let report: Report;

  before(async () => {
    ws = copyHostileWorkspace();
    run = await runCli(['check', '.', '--json'], ws.dir);
    report = parseReport(run);
  });
  after(() => ws.remove());

  it('exits 1 (errors were found) and writes nothing but the report to stdout', () => {
    assert.equal(run.code, 1, run.stderr);
    // The whole of stdout parsed as one report (before); the ops' own prints are not in it.
    assert.doesNotMatch(run.stdout.replace(/"output": "(?:[^"\\]|\\.)*"/g, ''), /grinding|millstone warm/);
    assert.equal(run.stderr, '', 'nothing on stderr: no crash, no stray output');
  });

  it('has exactly one result per op of the workspace (none lost, none invented)', () => {
    const got = report.pairs.map((p) => `${p.file}:${p.forward}`).sort();
    const want = HOSTILE_CASES.map((c) => `${c.file}:${c.forward}`).sort();
    assert.deepEqual(got, want);
  });

  for (const c of HOSTILE_CASES) {
    it(`${c.what}: ${c.forward} is ${c.verdict}`, () => {
      const r = pairOf(report, c.file, c.forward);
      assert.equal(r.verdict, c.verdict, show(r));
      assert.match(r.message, c.message, show(r));
      const line = expectedLine(c, ws.text(c.file));
      if (c.problemAt !== undefined) {
        assert.ok(r.problems && r.problems.length > 0, `problems point at the place: ${show(r)}`);
        assert.equal(r.problems[0]!.line, line, show(r));
      } else {
        assert.equal(r.line, line, `the result sits on the forward's line: ${show(r)}`);
      }
    });
  }

  it('no escape attempt wrote a file', () => {
    assert.deepEqual(ws.markers(), []);
  });

  it('an op sees none of the host among its globals', () => {
    const seen = pairOf(report, 'escape.ts', 'listGlobals')
      .message.replace(/^.*globals: /, '')
      .split(',');
    assert.ok(seen.includes('Math') && seen.includes('Float64Array'), seen.join(','));
    for (const name of HOST_GLOBALS) assert.ok(!seen.includes(name), `${name} is visible to an op: ${seen.join(',')}`);
  });

  it("keeps an op's console text in its own output field", () => {
    const grind = pairOf(report, 'chatty.ts', 'grind');
    assert.match(grind.output ?? '', /^grinding 2 sacks$/m);
    assert.match(grind.output ?? '', /^error: millstone warm$/m);
    // The backward printed something that looks like a report: still only in `output`.
    assert.match(grind.output ?? '', /^\{"version":1,"pairs":\[\]\}$/m);
    for (const other of report.pairs.filter((p) => p.forward !== 'grind')) {
      assert.doesNotMatch(other.output ?? '', /grinding/, show(other));
    }
  });

  it('the summary counts every verdict', () => {
    const count = (v: string) => HOSTILE_CASES.filter((c) => c.verdict === v).length;
    assert.deepEqual(report.summary, { pass: count('pass'), mismatch: 0, inconclusive: count('inconclusive'), error: count('error') });
  });
});

describe('hostile limits through the CLI', function () {
  this.timeout(180_000);
  let ws: HostileCopy;
  before(() => {
    ws = copyHostileWorkspace();
  });
  after(() => ws.remove());

  it('--time-limit stops a forward that never returns; the runner is replaced and the later ops run', async () => {
    // One runner: every op after the hang can only run on a replacement.
    const run = await runCli(['check', 'runaway.ts', '--json', '--workers', '1', '--time-limit', '1200'], ws.dir);
    const report = parseReport(run);
    assert.match(pairOf(report, 'runaway.ts', 'openSluiceForever').message, /^timed out after 1200 ms/);
    assert.equal(pairOf(report, 'runaway.ts', 'liftGate').verdict, 'pass');
    assert.equal(pairOf(report, 'runaway.ts', 'countTurns').verdict, 'error');
  });

  it('--memory-limit stops an allocation bomb at the given size; the runner is replaced', async () => {
    const run = await runCli(['check', 'allocation.ts', '--json', '--workers', '1', '--memory-limit', '128'], ws.dir);
    const report = parseReport(run);
    const bomb = pairOf(report, 'allocation.ts', 'recordRipples');
    assert.equal(bomb.verdict, 'error', show(bomb));
    assert.match(bomb.message, /(out of memory.*128 MiB memory limit|memory limit 128 MiB)/, show(bomb));
    assert.equal(pairOf(report, 'allocation.ts', 'pondLevel').verdict, 'pass');
  });

  it('maxElements from the configuration caps the size of inputs and outputs, with a clear message', async () => {
    const config = join(ws.dir, 'tight.json');
    writeFileSync(config, JSON.stringify({ maxElements: 3 }));
    const run = await runCli(['check', 'outputs.ts', 'runaway.ts', '--json', '--config', config, '--filter', 'liftGate'], ws.dir);
    const report = parseReport(run);
    const lift = pairOf(report, 'runaway.ts', 'liftGate');
    assert.equal(lift.verdict, 'error', show(lift));
    assert.match(lift.message, /4 elements exceed the limit of 3/, show(lift));
  });

  it('the per-file total time cap stops a file whose ops together run too long, and says so', async () => {
    // Six spinning ops at 400 ms each on one runner need 2,400 ms; the cap is 5 × 400 ms.
    const run = await runCli(['check', 'capped/spinMany.ts', '--json', '--workers', '1', '--time-limit', '400'], ws.dir);
    const report = parseReport(run);
    assert.equal(report.pairs.length, 6);
    const timedOut = report.pairs.filter((p) => /^timed out after 400 ms/.test(p.message));
    const capped = report.pairs.filter((p) => /reached their total time limit of 2000 ms/.test(p.message));
    assert.ok(timedOut.length >= 1 && capped.length >= 1, report.pairs.map(show).join('\n'));
    assert.equal(timedOut.length + capped.length, 6, report.pairs.map(show).join('\n'));
  });

  it('changes to globalThis and built-ins stay in their run, on a single runner', async () => {
    const run = await runCli(['check', 'leakWriter.ts', 'leakReader.ts', '--json', '--workers', '1'], ws.dir);
    const report = parseReport(run);
    for (const p of report.pairs) assert.equal(p.verdict, 'pass', show(p));
    assert.equal(report.pairs.length, 3);
  });

  it('the help says that checking runs the code, as a test runner does', async () => {
    const run = await runCli(['check', '--help'], ws.dir);
    assert.equal(run.code, 0);
    assert.match(run.stdout, /The checked code runs on this machine, as under a test runner: check only code you trust\./);
  });
});
