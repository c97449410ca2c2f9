// Builds the installable .vsix (`npm run package`, after `node esbuild.mjs`): stages the
// client, a self-contained server bundle (TypeScript inside; esbuild shipped beside it, as its
// binary cannot be bundled), the sandbox's runner and engine, the isolated interpreter's worker
// with QuickJS, then runs `vsce package`.
import * as esbuild from 'esbuild';
import { execFileSync } from 'node:child_process';
import { copyFileSync, cpSync, existsSync, mkdirSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const stage = join(root, '.editor-host', 'vsix-stage');
const pkg = JSON.parse(readFileSync(join(root, 'package.json'), 'utf8'));
const out = join(root, `${pkg.name}-${pkg.version}.vsix`);
const platformPackage = `@esbuild/${process.platform}-${process.arch}`;

rmSync(stage, { recursive: true, force: true });
mkdirSync(join(stage, 'dist'), { recursive: true });

for (const file of ['README.md', 'LICENSE', '.vscodeignore']) {
  if (existsSync(join(root, file))) copyFileSync(join(root, file), join(stage, file));
}
// The manifest without `files` (the npm package's allow-list): vsce refuses it beside
// .vscodeignore, which is the extension's own allow-list.
const { files: _npmFiles, ...manifest } = pkg;
writeFileSync(join(stage, 'package.json'), `${JSON.stringify(manifest, null, 2)}\n`);
// The JSON schema of gradient-probe.json (contributes.jsonValidation points at it).
cpSync(join(root, 'schemas'), join(stage, 'schemas'), { recursive: true });
for (const file of ['client.js', 'sandbox-child.js', 'engine-in-sandbox.js', 'isolated-worker.js']) {
  const from = join(root, 'dist', file);
  if (!existsSync(from)) throw new Error(`dist/${file} is missing: run node esbuild.mjs first`);
  copyFileSync(from, join(stage, 'dist', file));
}

// The server with every package inside except esbuild (its JavaScript API spawns its binary).
await esbuild.build({
  entryPoints: [join(root, 'server/src/lsp/main.ts')],
  outfile: join(stage, 'dist', 'server.js'),
  bundle: true, platform: 'node', target: 'node20', format: 'cjs', external: ['esbuild'],
  logLevel: 'warning', legalComments: 'none',
});

// esbuild's JavaScript API and this platform's binary, where require('esbuild') from dist/ finds them.
const modules = join(stage, 'dist', 'node_modules');
for (const f of ['package.json', 'LICENSE.md', 'lib/main.js']) {
  mkdirSync(dirname(join(modules, 'esbuild', f)), { recursive: true });
  copyFileSync(join(root, 'node_modules/esbuild', f), join(modules, 'esbuild', f));
}
cpSync(join(root, 'node_modules', platformPackage), join(modules, platformPackage), { recursive: true, dereference: true });
// The isolated interpreter's worker (dist/isolated-worker.js) loads QuickJS and its WebAssembly
// builds from node_modules at run time.
for (const name of ['quickjs-emscripten', 'quickjs-emscripten-core', '@jitl/quickjs-ffi-types', '@jitl/quickjs-wasmfile-release-sync',
  '@jitl/quickjs-wasmfile-release-asyncify', '@jitl/quickjs-wasmfile-debug-sync', '@jitl/quickjs-wasmfile-debug-asyncify']) {
  cpSync(join(root, 'node_modules', name), join(modules, name), { recursive: true, dereference: true });
}

// The project has no public repository URL yet, so README links stay as written (relative).
const args = ['package', '--no-dependencies', '--allow-missing-repository', '--no-rewrite-relative-links', '--out', out];
if (!existsSync(join(root, 'LICENSE'))) args.push('--skip-license');
execFileSync(process.execPath, [join(root, 'node_modules/@vscode/vsce/vsce'), ...args], { cwd: stage, stdio: 'inherit' });
console.log(`${out} (${(statSync(out).size / 1e6).toFixed(1)} MB)`);
