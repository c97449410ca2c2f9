// CI step (docs/derivatives.md, "TensorFlow.js ops"): a user's TensorFlow.js project, a folder with its own
// package.json that installs @tensorflow/tfjs, is checked by the built command line. The folder
// is copied outside the repository first, so only the project's own copy of the library can be
// found (the repository's dev dependency is out of reach), then installed from the npm registry
// with its lock file. Expected verdicts: the two correct ops pass, the labelled bug is a
// mismatch, and every op was checked through the library's gradient.
// Run from the repository root after `npm run build`: node test/outside/checkTfjsProject.mjs
import assert from 'node:assert/strict';
import { spawnSync } from 'node:child_process';
import { cpSync, existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

const here = dirname(fileURLToPath(import.meta.url));
const root = resolve(here, '..', '..');
const cli = join(root, 'bin', 'gradient-probe.js');
assert.ok(existsSync(join(root, 'dist', 'cli.js')), 'dist/cli.js is missing: run `npm run build` first');

const EXPECTED = { ventLimit: 'pass', glassHeat: 'pass', mistingPump: 'mismatch' };

const work = mkdtempSync(join(tmpdir(), 'gradient-probe-tfjs-project-'));
try {
  const project = join(work, 'tfjs-project');
  cpSync(join(here, 'tfjs-project'), project, { recursive: true, filter: (src) => !src.includes('node_modules') });
  const npm = process.platform === 'win32' ? 'npm.cmd' : 'npm';
  const install = spawnSync(npm, ['ci', '--no-audit', '--no-fund'], { cwd: project, encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'] });
  assert.equal(install.status, 0, `npm ci in the project failed:\n${install.stderr}`);
  const own = JSON.parse(readFileSync(join(project, 'node_modules', '@tensorflow', 'tfjs', 'package.json'), 'utf8'));
  assert.equal(own.version, '4.22.0', 'the project installed its own @tensorflow/tfjs');

  const run = spawnSync(process.execPath, [cli, 'check', '.', '--json'], { cwd: project, encoding: 'utf8', maxBuffer: 64 * 1024 * 1024 });
  let report;
  try {
    report = JSON.parse(run.stdout);
  } catch {
    throw new Error(`no JSON report (exit ${run.status}):\n${run.stdout.slice(0, 2000)}\n${run.stderr.slice(0, 2000)}`);
  }
  const got = Object.fromEntries(report.pairs.map((p) => [p.forward, p.verdict]));
  for (const p of report.pairs) console.log(`${p.file}:${p.line} ${p.forward}: ${p.verdict} ${p.message}`);
  assert.deepEqual(got, EXPECTED);
  for (const p of report.pairs) assert.equal(p.gradientSource, 'library', `${p.forward} was checked through the library's gradient`);
  assert.equal(run.status, 1, 'a mismatch makes the run fail (exit 1)');
  console.log('user tfjs project: checked with its own copy of the library, verdicts as expected');
} finally {
  rmSync(work, { recursive: true, force: true });
}
