// The demo workspace (examples/) through the real command line: every demo op gets its expected
// verdict, and each deliberate DEMO BUG is a mismatch that comes with at least one hint.

import assert from 'node:assert/strict';
import { spawnSync } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import type { OpCoverage } from '../../server/src/model/types';
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
  'examples/src/dawn.ts#dawnRamp': 'pass',
  'examples/src/tracker.ts#pointingResidual @jacobian': 'pass',
  'examples/src/tracker.ts#pointingResidual @tangent': 'pass',
  'examples/src/tracker.ts#aimingCost': 'pass',
  'examples/src/tracker.ts#aimingCost @hessian': 'mismatch',
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
  let pairs: Array<ReportedPair & { coverage?: OpCoverage }> = [];

  before(function () {
    this.timeout(5 * 60_000);
    assert.ok(existsSync(join(root, 'dist', 'cli.js')), 'dist/cli.js is missing: run `npm run build` first');
    const run = spawnSync(process.execPath, ['bin/gradient-probe.js', 'check', 'examples', '--json'], { cwd: root, encoding: 'utf8' });
    try {
      pairs = (JSON.parse(run.stdout) as { pairs: typeof pairs }).pairs;
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

  it('shows the labelled DEMO GAP as the one stretch of backward code the check never ran', function () {
    // The first statement after the `// DEMO GAP:` comment is where the unreached branch starts.
    const lines = readFileSync(join(root, 'examples', 'src', 'dawn.ts'), 'utf8').split('\n');
    const gapLine = lines.findIndex((l) => l.includes('// DEMO GAP:')) + 2;
    const withBackwardGaps = pairs.filter((p) => p.coverage?.collected && p.coverage.gaps.some((g) => g.side !== 'forward'));
    assert.deepEqual(
      withBackwardGaps.map((p) => p.forward),
      ['dawnRamp'],
    );
    const dawn = pairs.find((p) => p.forward === 'dawnRamp')!.coverage;
    assert.ok(dawn?.collected);
    const gap = dawn.gaps.find((g) => g.side === 'backward')!;
    assert.deepEqual([gap.file, gap.startLine, gap.function], ['examples/src/dawn.ts', gapLine, 'dawnRampBackward']);
    assert.match(gap.reach ?? '', /irradiance < 100, outside @sample irradiance \[200, 1000\]/);
    // The forward's arm reads the parameter through `const g = irradiance[h]`: followed, not guessed.
    const forwardGap = dawn.gaps.find((g) => g.side === 'forward')!;
    assert.equal(forwardGap.what, '`?` arm of `g < DAWN_W_M2`');
    assert.match(forwardGap.reach ?? '', /an element of irradiance < 100/);
  });

  it('explains each demo bug with at least one hint', function () {
    const bare = pairs.filter((p) => EXPECTED[`${p.file}#${p.forward}`] === 'mismatch' && allHints(p).length === 0);
    assert.deepEqual(
      bare.map((p) => `${p.file} ${p.forward}`),
      [],
    );
  });
});
