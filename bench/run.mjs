// Runner of `npm run bench`: builds what the benchmark runs (the CLI, the language server, the
// runner process, the engine bundle, as esbuild.mjs builds them, and bench/*.ts into
// dist/bench/), then runs dist/bench/main.js with the given flags (--quick, --skip=…).
import * as esbuild from 'esbuild';
import { spawnSync } from 'node:child_process';

const node = { bundle: true, platform: 'node', target: 'node20', format: 'cjs', sourcemap: true, logLevel: 'warning' };
const builds = [
  { ...node, entryPoints: { cli: 'server/src/cli/main.ts' }, outdir: 'dist', packages: 'external' },
  { ...node, entryPoints: { server: 'server/src/lsp/main.ts' }, outdir: 'dist', packages: 'external' },
  { ...node, entryPoints: { 'sandbox-child': 'server/src/sandbox/child.ts' }, outdir: 'dist' },
  {
    bundle: true, platform: 'neutral', format: 'iife', target: 'es2022', logLevel: 'warning',
    entryPoints: { 'engine-in-sandbox': 'server/src/engine/sandboxEntry.ts' }, outdir: 'dist',
  },
  {
    ...node, packages: 'external', outdir: 'dist/bench',
    entryPoints: ['bench/main.ts', 'bench/opWorker.ts', 'bench/detectWorker.ts', 'bench/profileRunner.ts'],
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
