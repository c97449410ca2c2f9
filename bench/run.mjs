// Runner of `npm run bench`: builds a private copy of what the benchmark runs into dist/bench/
// (the CLI with the language server, the runner process and the engine bundle, built as
// esbuild.mjs builds them, plus bench/*.ts), so another engineer's `npm run build` cannot swap
// the code under measurement mid-run; the bundled Checker finds the runner and the engine next
// to itself. Then runs dist/bench/main.js with the given flags (--quick, --skip=…).
import * as esbuild from 'esbuild';
import { spawnSync } from 'node:child_process';

const node = { bundle: true, platform: 'node', target: 'node20', format: 'cjs', sourcemap: true, logLevel: 'warning' };
const out = 'dist/bench';
const builds = [
  { ...node, entryPoints: { cli: 'server/src/cli/main.ts' }, outdir: out, packages: 'external' },
  { ...node, entryPoints: { 'sandbox-child': 'server/src/sandbox/child.ts' }, outdir: out },
  {
    bundle: true,
    platform: 'neutral',
    format: 'iife',
    target: 'es2022',
    logLevel: 'warning',
    entryPoints: { 'engine-in-sandbox': 'server/src/engine/sandboxEntry.ts' },
    outdir: out,
  },
  {
    ...node,
    packages: 'external',
    outdir: out,
    entryPoints: ['bench/main.ts', 'bench/opWorker.ts', 'bench/detectWorker.ts', 'bench/profileRunner.ts', 'bench/profileCaller.ts'],
  },
];
try {
  await Promise.all(builds.map((b) => esbuild.build(b)));
} catch (e) {
  console.error(`bench: the build failed: ${e.message}`);
  process.exit(1);
}
const run = spawnSync(process.execPath, ['dist/bench/main.js', ...process.argv.slice(2)], { stdio: 'inherit' });
process.exit(run.status ?? 1);
