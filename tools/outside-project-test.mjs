// The install test (`npm run test:install`, run by .ci/run): packs this project, installs the
// tarball as a devDependency of a new project outside the repository (own package.json and
// tsconfig, ESM with NodeNext resolution) and runs the installed `gradient-probe check` there.
// `--git` also installs from a git URL of this repository's HEAD (slow: the build needs every
// devDependency). Needs the npm registry. Exits 1 on the first failed expectation.
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const keep = process.argv.includes('--keep');
const alsoGit = process.argv.includes('--git');
const temp = mkdtempSync(join(tmpdir(), 'gp-outside-'));
let failures = 0;

function expect(ok, what, detail = '') {
  console.log(`${ok ? 'ok  ' : 'FAIL'}  ${what}${!ok && detail ? `\n${detail}` : ''}`);
  if (!ok) failures++;
}

function run(cmd, args, cwd) {
  return spawnSync(cmd, args, { cwd, encoding: 'utf8', env: { ...process.env, FORCE_COLOR: undefined, NO_COLOR: '1' }, maxBuffer: 64 << 20 });
}

/** A user's project: ESM, NodeNext, two ops (one right, one missing a factor 2) and a helper module. */
function writeUserProject(dir) {
  mkdirSync(join(dir, 'src'), { recursive: true });
  writeFileSync(join(dir, 'package.json'), JSON.stringify({ name: 'quillmere-controller', version: '1.0.0', private: true, type: 'module' }, null, 2));
  writeFileSync(
    join(dir, 'tsconfig.json'),
    JSON.stringify(
      {
        compilerOptions: { target: 'ES2022', module: 'NodeNext', moduleResolution: 'NodeNext', strict: true, noEmit: true },
      },
      null,
      2,
    ),
  );
  writeFileSync(join(dir, 'src', 'scale.ts'), 'export const VENT_SCALE = 3;\n');
  writeFileSync(
    join(dir, 'src', 'vents.ts'),
    `import { VENT_SCALE } from './scale.js';

/**
 * Cubic vent response, scaled. d/dx (s x^3) = 3 s x^2.
 * @backward ventCubeBackward
 * @sample x f64[10] in [-2, 2]
 */
export function ventCube(x: Float64Array): Float64Array {
  return x.map((v) => VENT_SCALE * v * v * v);
}

export function ventCubeBackward(x: Float64Array, dy: Float64Array): Float64Array {
  return x.map((v, i) => dy[i]! * 3 * VENT_SCALE * v * v);
}

/**
 * Squared response; its backward forgets the factor 2 on purpose (d/dx x^2 = 2x).
 * @backward ventSquareBackward
 * @sample x f64[10] in [-2, 2]
 */
export function ventSquare(x: Float64Array): Float64Array {
  return x.map((v) => v * v);
}

export function ventSquareBackward(x: Float64Array, dy: Float64Array): Float64Array {
  return x.map((v, i) => dy[i]! * v);
}
`,
  );
}

/** Runs the installed CLI in `dir` and checks the verdicts, the exit code and clean streams. */
function checkInstalled(dir, label) {
  const human = run('npx', ['--no-install', 'gradient-probe', 'check', 'src'], dir);
  expect(human.status === 1, `${label}: npx --no-install gradient-probe check src exits 1 (one mismatch)`, `exit ${human.status}\n${human.stdout}\n${human.stderr}`);
  expect(/2 ops in 2 files: 1 pass, 1 mismatch/.test(human.stdout), `${label}: the summary counts 1 pass and 1 mismatch`, human.stdout);
  expect(/no configuration file/.test(human.stdout), `${label}: the report says no configuration file was found`, human.stdout);
  expect(human.stderr === '', `${label}: nothing on stderr`, human.stderr);
  const json = run('npx', ['--no-install', 'gradient-probe', 'check', 'src', '--json'], dir);
  let verdicts = {};
  try {
    verdicts = Object.fromEntries(JSON.parse(json.stdout).pairs.map((p) => [p.forward, p.verdict]));
  } catch (e) {
    expect(false, `${label}: --json writes a JSON report`, `${e}\n${json.stdout}\n${json.stderr}`);
  }
  expect(verdicts.ventCube === 'pass' && verdicts.ventSquare === 'mismatch', `${label}: ventCube passes, ventSquare is a mismatch`, JSON.stringify(verdicts));
}

try {
  const pack = run('npm', ['pack', '--pack-destination', temp, '--json'], root);
  expect(pack.status === 0, 'npm pack', pack.stderr.slice(-3000));
  if (pack.status !== 0) process.exit(1);
  const info = JSON.parse(pack.stdout)[0];
  const tarball = join(temp, info.filename);
  const paths = info.files.map((f) => f.path);
  console.log(`      ${info.filename}: ${(info.size / 1024).toFixed(0)} KiB packed, ${paths.length} files`);
  for (const needed of [
    'bin/gradient-probe.js',
    'dist/cli.js',
    'dist/server.js',
    'dist/sandbox-child.js',
    'dist/engine-in-sandbox.js',
    'dist/isolated-worker.js',
    'schemas/gradient-probe.schema.json',
  ]) {
    expect(paths.includes(needed), `the tarball holds ${needed}`);
  }
  const stray = paths.filter((p) => /^(test|bench|server|client|tools|examples|dist\/test)\//.test(p) || p.endsWith('.map'));
  expect(stray.length === 0, 'the tarball holds no tests, benches, sources or source maps', stray.slice(0, 10).join('\n'));

  const user = join(temp, 'user');
  writeUserProject(user);
  const install = run('npm', ['install', '--no-audit', '--no-fund', '-D', tarball], user);
  expect(install.status === 0, 'npm install -D <tarball> in a fresh ESM project', install.stderr.slice(-3000));
  if (install.status === 0) {
    const installed = JSON.parse(readFileSync(join(user, 'node_modules', 'gradient-probe', 'package.json'), 'utf8'));
    const runtime = Object.keys(installed.dependencies ?? {}).sort();
    console.log(`      runtime dependencies: ${runtime.join(', ')}`);
    expect(!runtime.includes('vscode-languageclient'), 'vscode-languageclient is no runtime dependency (bundled into dist/client.js)');
    checkInstalled(user, 'tarball');
    // The README's CI matrix: two shard jobs, then the join with a SARIF file.
    const shardReports = [];
    for (const k of [1, 2]) {
      const shard = run('npx', ['--no-install', 'gradient-probe', 'check', 'src', '--shard', `${k}/2`, '--json'], user);
      expect(shard.status === 0 || shard.status === 1, `shard ${k}/2 runs (exit ${shard.status})`, shard.stderr);
      writeFileSync(join(user, `probe-${k}.json`), shard.stdout);
      shardReports.push(`probe-${k}.json`);
    }
    const merged = run('npx', ['--no-install', 'gradient-probe', 'merge', ...shardReports, '--sarif', 'gradient-probe.sarif'], user);
    expect(merged.status === 1 && /2 ops in 2 files: 1 pass, 1 mismatch/.test(merged.stdout), 'merge of the two shards: one report, exit 1', merged.stdout + merged.stderr);
    let sarifResults = -1;
    try {
      sarifResults = JSON.parse(readFileSync(join(user, 'gradient-probe.sarif'), 'utf8')).runs[0].results.length;
    } catch {
      // reported below
    }
    expect(sarifResults === 1, 'merge --sarif writes the one mismatch as a finding', String(sarifResults));
    const version = run('npx', ['--no-install', 'gradient-probe', '--version'], user);
    expect(version.stdout.trim() === installed.version, `gradient-probe --version prints ${installed.version}`, version.stdout + version.stderr);
  }

  if (alsoGit) {
    const head = execFileSync('git', ['rev-parse', 'HEAD'], { cwd: root, encoding: 'utf8' }).trim();
    const fromGit = join(temp, 'from-git');
    writeUserProject(fromGit);
    const gitInstall = run('npm', ['install', '--no-audit', '--no-fund', '-D', `git+file://${root}#${head}`], fromGit);
    expect(gitInstall.status === 0, `npm install -D git+file://…#${head.slice(0, 10)} (prepare builds dist/)`, gitInstall.stderr.slice(-3000));
    if (gitInstall.status === 0) checkInstalled(fromGit, 'git URL');
  }
} finally {
  if (keep) console.log(`      kept ${temp}`);
  else rmSync(temp, { recursive: true, force: true });
}
console.log(failures === 0 ? 'install test passed' : `install test: ${failures} failure(s)`);
process.exit(failures === 0 ? 0 : 1);
