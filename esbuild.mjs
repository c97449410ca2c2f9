// Builds every runnable artefact into dist/: the CLI, the language server, the VS Code
// client, the sandbox's child process, the engine bundle evaluated inside the sandbox, and
// the mocha test files. `node esbuild.mjs --watch` rebuilds on change.
import * as esbuild from 'esbuild';
import { readdirSync, statSync } from 'node:fs';
import { join } from 'node:path';

const watch = process.argv.includes('--watch');

/** Every `*.test.ts` under a folder, skipping fixtures and corpora (they are test data). */
function testFiles(dir) {
  const out = [];
  for (const name of readdirSync(dir)) {
    const p = join(dir, name);
    if (statSync(p).isDirectory()) {
      if (name !== 'fixtures' && name !== 'corpus' && name !== 'node_modules') out.push(...testFiles(p));
    } else if (name.endsWith('.test.ts')) out.push(p);
  }
  return out;
}

const node = { bundle: true, platform: 'node', target: 'node20', format: 'cjs', sourcemap: true, logLevel: 'warning' };

const builds = [
  // Host-side programs: packages stay in node_modules (esbuild and typescript are loaded at run time).
  { ...node, entryPoints: { cli: 'server/src/cli/main.ts' }, outdir: 'dist', packages: 'external' },
  { ...node, entryPoints: { server: 'server/src/lsp/main.ts' }, outdir: 'dist', packages: 'external' },
  { ...node, entryPoints: { client: 'client/src/extension.ts' }, outdir: 'dist', external: ['vscode'] },
  // The runner process: Node built-ins only.
  { ...node, entryPoints: { 'sandbox-child': 'server/src/sandbox/child.ts' }, outdir: 'dist' },
  // The isolated mode's interpreter process: QuickJS (WebAssembly) loaded from node_modules at run time.
  { ...node, entryPoints: { 'isolated-worker': 'server/src/sandbox/isolatedWorker.ts' }, outdir: 'dist', packages: 'external' },
  // Evaluated inside the sandbox's vm context: no Node, no packages; defines one global.
  {
    bundle: true,
    platform: 'neutral',
    format: 'iife',
    target: 'es2022',
    logLevel: 'warning',
    entryPoints: { 'engine-in-sandbox': 'server/src/engine/sandboxEntry.ts' },
    outdir: 'dist',
  },
  { ...node, entryPoints: testFiles('test'), outdir: 'dist/test', outbase: 'test', packages: 'external' },
];

if (watch) {
  for (const b of builds) await (await esbuild.context(b)).watch();
  console.log('watching…');
} else {
  await Promise.all(builds.map((b) => esbuild.build(b)));
}
