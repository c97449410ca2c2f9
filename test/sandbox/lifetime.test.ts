// The Checker must never keep its caller's process alive: dispose() resolves even when the
// runners are idle, and a caller that forgets dispose() still exits. Checked in a real Node
// process running a script bundled here with the real esbuild.
import assert from 'node:assert/strict';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { dirname, join } from 'node:path';
import * as esbuild from 'esbuild';
import { CHILD_SCRIPT_NAME, ENGINE_SCRIPT_NAME, findBuiltAsset } from '../../server/src/sandbox/assets';
import { fixture, fixturesDir } from './helpers';

const SCRIPT = `
import { Checker } from './server/src/core/checker';
import { DEFAULT_SETTINGS } from './server/src/engine/settings';
const [childScript, engineScript, file, mode] = process.argv.slice(2);
const checker = new Checker({ settings: DEFAULT_SETTINGS, workers: 1, runner: { childScript, engineScript } });
void checker.checkFile(file).then(async (results) => {
  console.log('verdict ' + results.map((r) => r.verdict).join(','));
  if (mode === 'dispose') {
    await checker.dispose();
    console.log('disposed');
  }
});
`;

describe('checker: process lifetime', function () {
  this.timeout(60_000);
  const repoRoot = dirname(dirname(dirname(fixturesDir())));
  let scratch: string;
  let script: string;

  before(async () => {
    // Inside the repository, so the script resolves typescript and esbuild from its node_modules.
    const dist = join(repoRoot, 'dist');
    scratch = mkdtempSync(join(dist, 'lifetime-'));
    script = join(scratch, 'caller.js');
    await esbuild.build({
      stdin: { contents: SCRIPT, resolveDir: repoRoot, loader: 'ts', sourcefile: 'caller.ts' },
      bundle: true,
      platform: 'node',
      format: 'cjs',
      packages: 'external',
      outfile: script,
      logLevel: 'silent',
    });
  });
  after(() => rmSync(scratch, { recursive: true, force: true }));

  function runCaller(mode: 'dispose' | 'forget'): { status: number | null; signal: NodeJS.Signals | null; stdout: string; stderr: string } {
    const childScript = findBuiltAsset(CHILD_SCRIPT_NAME);
    const engineScript = findBuiltAsset(ENGINE_SCRIPT_NAME);
    assert.ok(childScript && engineScript, 'the sandbox assets are built');
    const r = spawnSync(process.execPath, [script, childScript, engineScript, fixture('trivial.ts'), mode], {
      encoding: 'utf8',
      timeout: 30_000,
    });
    return { status: r.status, signal: r.signal, stdout: r.stdout, stderr: r.stderr };
  }

  it('dispose() resolves and the process exits', () => {
    const r = runCaller('dispose');
    assert.equal(r.signal, null, `killed by the test's timeout: the caller hung\n${r.stderr}`);
    assert.equal(r.status, 0, r.stderr);
    assert.match(r.stdout, /^verdict pass$/m);
    assert.match(r.stdout, /^disposed$/m);
  });

  it('a caller that forgets dispose() still exits once its work is done', () => {
    const r = runCaller('forget');
    assert.equal(r.signal, null, `killed by the test's timeout: the idle pool kept the caller alive\n${r.stderr}`);
    assert.equal(r.status, 0, r.stderr);
    assert.match(r.stdout, /^verdict pass$/m);
  });
});
