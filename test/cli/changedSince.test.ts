// `check --changed-since REF` through the real CLI in a temporary git repository: after a helper
// module changes, the ops whose bundle imports it are checked and the others are skipped, counted.

import assert from 'node:assert/strict';
import { execFileSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Report } from '../../server/src/model/types';
import { runCli, SPAWN_LIMIT_MS } from '../helpers/cli';
import { reportViolations } from './helpers/reportShape';

/** An op file whose forward scales by `factor` (imported from `from`, or a literal). */
function opFile(name: string, factor: { from: string; symbol: string } | number): string {
  const head = typeof factor === 'number' ? `const FACTOR = ${factor};\n` : `import { ${factor.symbol} as FACTOR } from '${factor.from}';\n`;
  return `${head}
/**
 * Kiln damper ${name}: FACTOR·x², so d/dx = 2·FACTOR·x.
 * @backward ${name}Backward
 * @sample x f64[3] in [-1, 1]
 */
export function ${name}(x: Float64Array): Float64Array {
  return x.map((v) => FACTOR * v * v);
}

export function ${name}Backward(x: Float64Array, dy: Float64Array): Float64Array {
  return x.map((v, i) => dy[i]! * 2 * FACTOR * v);
}
`;
}

describe('check --changed-since (spawned CLI, temporary git repository)', function () {
  this.timeout(4 * SPAWN_LIMIT_MS);
  let repo: string;
  const git = (...args: string[]): string => execFileSync('git', args, { cwd: repo, encoding: 'utf8' });

  before(() => {
    repo = mkdtempSync(join(tmpdir(), 'gp-changed-'));
    mkdirSync(join(repo, 'src', 'shared'), { recursive: true });
    writeFileSync(join(repo, 'package.json'), '{ "name": "kiln", "private": true, "type": "module" }\n');
    writeFileSync(join(repo, 'src', 'shared', 'scale.ts'), 'export const DAMPER_SCALE = 2;\n');
    writeFileSync(join(repo, 'src', 'upper.ts'), opFile('upperDamper', { from: './shared/scale.js', symbol: 'DAMPER_SCALE' }));
    writeFileSync(join(repo, 'src', 'lower.ts'), opFile('lowerDamper', { from: './shared/scale.js', symbol: 'DAMPER_SCALE' }));
    writeFileSync(join(repo, 'src', 'flue.ts'), opFile('flueDamper', 5));
    git('init', '-q');
    git('-c', 'user.name=Kiln', '-c', 'user.email=kiln@example.invalid', 'add', '.');
    git('-c', 'user.name=Kiln', '-c', 'user.email=kiln@example.invalid', 'commit', '-q', '-m', 'dampers');
  });
  after(() => rmSync(repo, { recursive: true, force: true }));

  it('checks nothing and says so when nothing changed (exit 0: the ops exist, none changed)', async () => {
    const run = await runCli(['check', 'src', '--changed-since', 'HEAD'], { cwd: repo });
    assert.equal(run.code, 0, run.stdout + run.stderr);
    assert.match(run.stdout, /--changed-since HEAD: 3 ops skipped/);
  });

  it('after a helper file changes, checks its importers and skips the rest', async () => {
    writeFileSync(join(repo, 'src', 'shared', 'scale.ts'), 'export const DAMPER_SCALE = 3;\n');
    const run = await runCli(['check', 'src', '--changed-since', 'HEAD', '--json'], { cwd: repo });
    assert.equal(run.code, 0, run.stderr);
    const report = JSON.parse(run.stdout) as Report;
    assert.deepEqual(reportViolations(report), []);
    assert.deepEqual(report.pairs.map((p) => p.forward).sort(), ['lowerDamper', 'upperDamper']);
    assert.deepEqual(report.run?.changedSince, { ref: 'HEAD', skipped: 1 });
    const human = await runCli(['check', 'src', '--changed-since', 'HEAD'], { cwd: repo });
    assert.match(human.stdout, /--changed-since HEAD: 1 op skipped \(neither their file nor a file they import changed\)/);
  });

  it('counts a new, untracked op file as changed', async () => {
    writeFileSync(join(repo, 'src', 'chimney.ts'), opFile('chimneyDamper', 4));
    const run = await runCli(['check', 'src', '--changed-since', 'HEAD', '--json'], { cwd: repo });
    assert.equal(run.code, 0, `exit ${run.code}; stderr: ${run.stderr}`);
    const report = JSON.parse(run.stdout) as Report;
    assert.ok(report.pairs.some((p) => p.forward === 'chimneyDamper'));
    assert.ok(!report.pairs.some((p) => p.forward === 'flueDamper'));
  });

  it('refuses a revision git does not know, naming it (exit 2)', async () => {
    const run = await runCli(['check', 'src', '--changed-since', 'no-such-branch'], { cwd: repo });
    assert.equal(run.code, 2);
    assert.match(run.stderr, /--changed-since no-such-branch: git rev-parse failed/);
  });
});
