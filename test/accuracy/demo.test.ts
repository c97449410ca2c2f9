// The demo workspace (examples/) through the real command line: every demo op gets its expected
// verdict, and each deliberate DEMO BUG is a mismatch that comes with at least one hint.

import assert from 'node:assert/strict';
import { spawnSync } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { allHints, type ReportedPair } from './corpusLabels';

/** Expected verdict of each demo op; the mismatches are the `// DEMO BUG:` ops of examples/src. */
const EXPECTED: Record<string, 'pass' | 'mismatch'> = {
  'examples/src/derating.ts#derate': 'mismatch',
  'examples/src/layers.ts#dense': 'pass',
  'examples/src/layers.ts#softplus': 'pass',
  'examples/src/layers.ts#layerNorm': 'pass',
  'examples/src/attention.ts#hourAttention': 'mismatch',
  'examples/src/loss.ts#huberLoss': 'pass',
  'examples/src/memory.ts#IrradianceMemory.trace': 'mismatch',
  'examples/src/inverter.ts#inverterClip': 'pass',
  'examples/src/soiling.ts#soilingLoss': 'mismatch',
};

function findRoot(): string {
  for (const start of [__dirname, process.cwd()]) {
    for (let dir = start; ; dir = dirname(dir)) {
      const pkg = join(dir, 'package.json');
      if (existsSync(pkg) && (JSON.parse(readFileSync(pkg, 'utf8')) as { name?: string }).name === 'gradient-probe') return dir;
      if (dirname(dir) === dir) break;
    }
  }
  throw new Error('cannot find the gradient-probe repository root');
}

describe('demo workspace through the command line', function () {
  const root = findRoot();
  let pairs: ReportedPair[] = [];

  before(function () {
    this.timeout(5 * 60_000);
    assert.ok(existsSync(join(root, 'dist', 'cli.js')), 'dist/cli.js is missing: run `npm run build` first');
    const run = spawnSync(process.execPath, ['bin/gradient-probe.js', 'check', 'examples', '--json'], { cwd: root, encoding: 'utf8' });
    try {
      pairs = (JSON.parse(run.stdout) as { pairs: ReportedPair[] }).pairs;
    } catch {
      throw new Error(`no JSON report (exit ${run.status}): ${run.stderr.slice(0, 2000)}`);
    }
    for (const p of pairs) console.log(`      ${p.file} ${p.forward}: ${p.verdict} ${p.message} ${allHints(p).join(' | ')}`);
  });

  it('reports exactly the demo ops', function () {
    assert.deepEqual(pairs.map((p) => `${p.file}#${p.forward}`).sort(), Object.keys(EXPECTED).sort());
  });

  it('gives every demo op its expected verdict', function () {
    const got = Object.fromEntries(pairs.map((p) => [`${p.file}#${p.forward}`, p.verdict]));
    assert.deepEqual(got, EXPECTED);
  });

  it('explains each demo bug with at least one hint', function () {
    const bare = pairs.filter((p) => EXPECTED[`${p.file}#${p.forward}`] === 'mismatch' && allHints(p).length === 0);
    assert.deepEqual(bare.map((p) => `${p.file} ${p.forward}`), []);
  });
});
