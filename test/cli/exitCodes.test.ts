// Exit codes a CI step can trust, through the real CLI: an op cut short by the time limit fails
// the run; a genuine inconclusive keeps 0 but is counted; a run that checks nothing fails with
// the reason; the report names its configuration file; nothing but the report on the streams.

import assert from 'node:assert/strict';
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Report } from '../../server/src/model/types';
import { runCli, SPAWN_LIMIT_MS } from '../helpers/cli';

const FIXTURES = 'test/fixtures/cli';

/** A correct op of our own (d/dx 2x² = 4x) for the temporary projects. */
function opSource(name: string): string {
  return `/**
 * Kiln vent ${name}.
 * @backward ${name}Backward
 * @sample x f64[4] in [-2, 2]
 */
export function ${name}(x: Float64Array): Float64Array {
  return x.map((v) => 2 * v * v);
}

export function ${name}Backward(x: Float64Array, dy: Float64Array): Float64Array {
  return x.map((v, i) => dy[i]! * 4 * v);
}
`;
}

describe('exit codes and streams (spawned CLI)', function () {
  this.timeout(2 * SPAWN_LIMIT_MS);
  const temps: string[] = [];
  /** A project folder of its own (package.json bounds the configuration search). */
  const project = (files: Record<string, string>): string => {
    const dir = mkdtempSync(join(tmpdir(), 'gp-exit-'));
    temps.push(dir);
    writeFileSync(join(dir, 'package.json'), '{ "name": "kiln-project", "private": true }\n');
    for (const [rel, text] of Object.entries(files)) {
      mkdirSync(join(dir, rel, '..'), { recursive: true });
      writeFileSync(join(dir, rel), text);
    }
    return dir;
  };
  after(() => {
    for (const d of temps) rmSync(d, { recursive: true, force: true });
  });

  describe('a check the time limit stopped before every element was compared', () => {
    // 100 elements checked one by one need 200 forward calls of tens of ms each; 4 s allows a few dozen.
    const args = ['check', `${FIXTURES}/unfinished`, '--time-limit', '4000', '--no-coverage'];

    it('fails the run by default, saying how far it got and which limit to raise', async () => {
      const run = await runCli(args);
      assert.equal(run.code, 1, run.stdout + run.stderr);
      assert.match(run.stdout, /not finished: the time limit of 4000 ms stopped the check of 'x' after \d+ of 100 elements/);
      assert.match(run.stdout, /--time-limit MS or "timeLimitMs" in gradient-probe\.json/);
      assert.match(run.stdout, /1 op in 1 file: 0 pass, 0 mismatch, 1 inconclusive \(1 stopped at the time limit\), 0 error/);
    });

    it('carries how far it got as a structured field of the JSON report, and passes with --allow-unfinished', async () => {
      const run = await runCli([...args, '--json', '--allow-unfinished']);
      assert.equal(run.code, 0, run.stderr);
      const pair = (JSON.parse(run.stdout) as Report).pairs[0]!;
      assert.equal(pair.verdict, 'inconclusive');
      const stop = pair.stoppedAtTimeLimit;
      assert.ok(stop, JSON.stringify(pair));
      assert.equal(stop.param, 'x');
      assert.equal(stop.stage, 'elements');
      assert.equal(stop.total, 100);
      assert.equal(stop.timeLimitMs, 4000);
      assert.ok(stop.done >= 0 && stop.done < 100, String(stop.done));
    });
  });

  it('keeps exit 0 for a genuine inconclusive (a forward that is not deterministic), and counts it', async () => {
    const run = await runCli(['check', `${FIXTURES}/drift`]);
    assert.equal(run.code, 0, run.stdout + run.stderr);
    assert.match(run.stdout, /forward is not deterministic/);
    assert.match(run.stdout, /1 op in 1 file: 0 pass, 0 mismatch, 1 inconclusive, 0 error/);
    assert.doesNotMatch(run.stdout, /stopped at the time limit/);
    const strict = await runCli(['check', `${FIXTURES}/drift`, '--fail-on-inconclusive']);
    assert.equal(strict.code, 1);
  });

  describe('a run that checks no op fails with the reason', () => {
    it('no TypeScript sources under the path', async () => {
      const dir = project({ 'notes/readme.md': '# kiln\n' });
      const run = await runCli(['check', 'notes'], { cwd: dir });
      assert.equal(run.code, 2, run.stdout + run.stderr);
      assert.match(run.stderr, /nothing was checked: no TypeScript sources \(\.ts, \.tsx, \.mts, \.cts\) under notes/);
    });

    it('sources, but no annotated op (and never "no TypeScript sources")', async () => {
      const dir = project({ 'src/plain.ts': 'export const kilnCount = 3;\n' });
      const run = await runCli(['check', 'src'], { cwd: dir });
      assert.equal(run.code, 2, run.stdout + run.stderr);
      assert.match(run.stderr, /nothing was checked: no annotated op in the 1 TypeScript source under src/);
      assert.doesNotMatch(run.stderr, /no TypeScript sources/);
    });

    it('every file left out by exclude, naming the configuration file and the glob', async () => {
      const dir = project({ 'src/vents.ts': opSource('vent'), 'gradient-probe.json': '{ "exclude": ["src/**"] }\n' });
      const run = await runCli(['check', 'src'], { cwd: dir });
      assert.equal(run.code, 2, run.stdout + run.stderr);
      assert.match(run.stderr, /every TypeScript source under src is left out by gradient-probe\.json: 1 source left out by the "exclude" glob "src\/\*\*"/);
      assert.doesNotMatch(run.stderr, /no TypeScript sources/);
    });

    it('every file left out by include, naming the configuration file and the globs', async () => {
      const dir = project({ 'src/vents.ts': opSource('vent'), 'gradient-probe.json': '{ "include": ["lib/**/*.ts"] }\n' });
      const run = await runCli(['check'], { cwd: dir });
      assert.equal(run.code, 2, run.stdout + run.stderr);
      assert.match(run.stderr, /left out by gradient-probe\.json: 1 source match no "include" glob \("lib\/\*\*\/\*\.ts"\)/);
    });

    it('--filter matching nothing', async () => {
      const run = await runCli(['check', `${FIXTURES}/basic/passing.ts`, '--filter', 'glazr', '--json']);
      assert.equal(run.code, 2);
      assert.match(run.stderr, /--filter "glazr" matches no op's forward name \(the 2 ops found do not contain it/);
      assert.deepEqual((JSON.parse(run.stdout) as Report).pairs, [], 'the (empty) report is still written');
    });
  });

  describe('the configuration file in the human report', () => {
    it('names the file it used', async () => {
      const run = await runCli(['check', `${FIXTURES}/configured`]);
      assert.match(run.stdout, /^configuration file: test\/fixtures\/cli\/configured\/gradient-probe\.json$/m);
    });

    it("says when none was found, and a parent folder's file does not reach into a package of its own", async () => {
      const outer = project({ 'gradient-probe.json': '{ "seed": 7 }\n' });
      // `inner` is its own package: the outer file (seed 7) must not apply.
      writeFileSync(join(outer, 'package.json'), '{}');
      const inner = join(outer, 'inner');
      mkdirSync(join(inner, 'src'), { recursive: true });
      writeFileSync(join(inner, 'package.json'), '{ "name": "inner", "private": true }\n');
      writeFileSync(join(inner, 'src', 'vents.ts'), opSource('vent'));
      const run = await runCli(['check', 'src'], { cwd: inner });
      assert.equal(run.code, 0, run.stdout + run.stderr);
      assert.match(run.stdout, /^no configuration file found; built-in defaults and flags apply$/m);
      const json = JSON.parse((await runCli(['check', 'src', '--json'], { cwd: inner })).stdout) as Report;
      assert.equal(json.pairs[0]!.seed, 1234, "the default seed, not the outer file's 7");
      assert.equal(json.run?.config, null);
    });
  });

  it('prints nothing on stderr for a file with more than ten ops (no listener warnings)', async () => {
    let text = '';
    for (let i = 0; i < 12; i++) text += opSource(`vent${i}`);
    const dir = project({ 'src/vents.ts': text });
    const run = await runCli(['check', 'src'], { cwd: dir });
    assert.equal(run.code, 0, run.stdout + run.stderr);
    assert.match(run.stdout, /12 ops in 1 file: 12 pass/);
    assert.equal(run.stderr, '');
  });
});
