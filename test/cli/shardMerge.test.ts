// `check --shard K/N` and `merge` through the real CLI on the accuracy corpus (test/corpus):
// for N = 1..4 the shards together check every op exactly once, and merging the shard reports
// gives the unsharded report's verdicts, counts and exit code. Unlike reports are refused.

import assert from 'node:assert/strict';
import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { OpResult, Report } from '../../server/src/model/types';
import { reportViolations } from './helpers/reportShape';
import { findAll, parseXml } from './helpers/xml';
import { runCli, SPAWN_LIMIT_MS, type CliRun } from '../helpers/cli';

const CORPUS = 'test/corpus';

/** What identifies an entry, and its verdict. */
function entryKey(p: OpResult): string {
  return `${p.file}:${p.line}:${p.forward ?? '(file)'}:${p.kind ?? 'backward'}`;
}

/** A correct op (d/dx 3x² = 6x). */
function op(name: string): string {
  return `/**
 * Kiln fan ${name}.
 * @backward ${name}Backward
 * @sample x f64[3] in [-1, 1]
 */
export function ${name}(x: Float64Array): Float64Array {
  return x.map((v) => 3 * v * v);
}

export function ${name}Backward(x: Float64Array, dy: Float64Array): Float64Array {
  return x.map((v, i) => dy[i]! * 6 * v);
}
`;
}

function verdicts(report: Report): string[] {
  return report.pairs.map((p) => `${entryKey(p)} ${p.verdict}`);
}

describe('check --shard and merge (spawned CLI, test corpus)', function () {
  this.timeout(20 * SPAWN_LIMIT_MS);
  let dir: string;
  let whole: CliRun;
  let wholeReport: Report;
  const shardFiles = new Map<number, string[]>();

  before(async () => {
    dir = mkdtempSync(join(tmpdir(), 'gp-shard-'));
    whole = await runCli(['check', CORPUS, '--json']);
    wholeReport = JSON.parse(whole.stdout) as Report;
    for (let n = 1; n <= 4; n++) {
      const files: string[] = [];
      for (let k = 1; k <= n; k++) {
        const run = await runCli(['check', CORPUS, '--json', '--shard', `${k}/${n}`]);
        assert.ok(run.code === 0 || run.code === 1, `shard ${k}/${n} exit ${run.code}: ${run.stderr}`);
        const file = join(dir, `shard-${k}-of-${n}.json`);
        writeFileSync(file, run.stdout);
        files.push(file);
      }
      shardFiles.set(n, files);
    }
  });
  after(() => rmSync(dir, { recursive: true, force: true }));

  it('the unsharded run checks the corpus (the reference)', () => {
    assert.ok(wholeReport.pairs.length > 20, `${wholeReport.pairs.length} entries`);
    assert.equal(whole.code, 1, 'the corpus holds labelled bugs');
  });

  for (let n = 1; n <= 4; n++) {
    it(`N = ${n}: the shards together check every entry exactly once`, () => {
      const seen = new Map<string, number>();
      for (const file of shardFiles.get(n)!) {
        const report = JSON.parse(readFileSync(file, 'utf8')) as Report;
        assert.equal(report.run?.shard?.count, n);
        assert.deepEqual(reportViolations(report), [], file);
        for (const pair of report.pairs) seen.set(entryKey(pair), (seen.get(entryKey(pair)) ?? 0) + 1);
      }
      const expected = wholeReport.pairs.map(entryKey).sort();
      assert.deepEqual([...seen.keys()].sort(), expected, 'the same entries as the unsharded run');
      const twice = [...seen].filter(([, c]) => c !== 1);
      assert.deepEqual(twice, [], 'no entry in two shards');
    });

    it(`N = ${n}: merge of the shard reports equals the unsharded report (verdicts, counts, exit code)`, async () => {
      const merged = await runCli(['merge', ...shardFiles.get(n)!, '--json']);
      assert.equal(merged.code, whole.code, merged.stderr);
      const report = JSON.parse(merged.stdout) as Report;
      assert.deepEqual(reportViolations(report), []);
      assert.deepEqual(verdicts(report), verdicts(wholeReport));
      assert.deepEqual(report.summary, wholeReport.summary);
      assert.deepEqual(report.run?.settings, wholeReport.run?.settings);
      assert.equal(report.run?.shard, undefined, 'the joined report is the whole run');
    });
  }

  it('adding an op moves no other op between shards (a hash of file and forward name, not of position)', async () => {
    const project = join(dir, 'stable');
    mkdirSync(join(project, 'src'), { recursive: true });
    writeFileSync(join(project, 'package.json'), '{ "name": "stable", "private": true }\n');
    const names = ['ventA', 'ventB', 'ventC', 'ventD', 'ventE', 'ventF'];
    const write = (list: string[]): void => writeFileSync(join(project, 'src', 'vents.ts'), list.map(op).join('\n'));
    const shardOf = async (): Promise<Map<string, number>> => {
      const where = new Map<string, number>();
      for (const k of [1, 2]) {
        const run = await runCli(['check', 'src', '--json', '--shard', `${k}/2`], { cwd: project });
        for (const pair of (JSON.parse(run.stdout) as Report).pairs) where.set(pair.forward!, k);
      }
      return where;
    };
    write(names);
    const before = await shardOf();
    assert.equal(before.size, names.length);
    write(['ventNew', ...names]); // every old op moves down the file
    const after = await shardOf();
    assert.equal(after.size, names.length + 1);
    for (const name of names) assert.equal(after.get(name), before.get(name), name);
  });

  it('merge writes SARIF, JUnit and the human table like check', async () => {
    const sarif = join(dir, 'merged.sarif');
    const junit = join(dir, 'merged.xml');
    const run = await runCli(['merge', ...shardFiles.get(3)!, '--sarif', sarif, '--junit', junit]);
    assert.equal(run.code, whole.code);
    const s = wholeReport.summary;
    assert.match(run.stdout, new RegExp(`${wholeReport.pairs.length} ops in \\d+ files: ${s.pass} pass, ${s.mismatch} mismatch, ${s.inconclusive} inconclusive, ${s.error} error`));
    const log = JSON.parse(readFileSync(sarif, 'utf8')) as { runs: { results: { ruleId: string }[] }[] };
    // Coverage notes (unreached code) are findings of their own; the verdict findings are the rest.
    assert.equal(log.runs[0]!.results.filter((r) => r.ruleId !== 'unreached-code').length, s.mismatch + s.inconclusive + s.error);
    const doc = parseXml(readFileSync(junit, 'utf8'));
    assert.equal(findAll(doc, 'testcase').length, wholeReport.pairs.length);
  });

  it('refuses reports of different seeds, naming the setting', async () => {
    const other = join(dir, 'seed-7.json');
    writeFileSync(other, (await runCli(['check', CORPUS, '--json', '--shard', '2/2', '--seed', '7'])).stdout);
    const run = await runCli(['merge', shardFiles.get(2)![0]!, other]);
    assert.equal(run.code, 2);
    assert.match(run.stderr, /come from different runs \(setting seed is 7 against 1234: a different seed draws different inputs\)/);
    assert.equal(run.stdout, '');
  });

  it('refuses a shard given twice, a missing shard, and a report without a run record', async () => {
    const [first, second, third] = shardFiles.get(3)!;
    const twice = await runCli(['merge', first!, second!, first!]);
    assert.equal(twice.code, 2);
    assert.match(twice.stderr, /are both shard 1\/3/);
    const missing = await runCli(['merge', first!, third!]);
    assert.equal(missing.code, 2);
    assert.match(missing.stderr, /shard 2\/3 missing/);
    const bare = join(dir, 'bare.json');
    const report = JSON.parse(readFileSync(first!, 'utf8')) as Report;
    delete report.run;
    writeFileSync(bare, JSON.stringify(report));
    const old = await runCli(['merge', bare]);
    assert.equal(old.code, 2);
    assert.match(old.stderr, /has no "run" record/);
  });
});
