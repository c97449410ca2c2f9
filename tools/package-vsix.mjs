// Builds the installable .vsix (`npm run package`, after `node esbuild.mjs`): stages the
// client, a self-contained server bundle (TypeScript inside; esbuild shipped beside it, as its
// binary cannot be bundled), the sandbox's runner and engine, the isolated interpreter's worker
// with QuickJS, the marketplace README, CHANGELOG, icon and screenshots, then runs `vsce package`.
// It first checks that the manifest is complete, and stops with the list of what is missing.
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
/** The icon's source; package.json's `icon` names where it lands in the package (images/). */
const ICON_SOURCE = 'client/marketplace/icon.png';

rmSync(stage, { recursive: true, force: true });
mkdirSync(join(stage, 'dist'), { recursive: true });

checkManifest(pkg);

for (const file of ['LICENSE', '.vscodeignore']) {
  if (existsSync(join(root, file))) copyFileSync(join(root, file), join(stage, file));
}
// The manifest without `files` (the npm package's allow-list): vsce refuses it beside
// .vscodeignore, which is the extension's own allow-list.
const { files: _npmFiles, ...manifest } = pkg;
writeFileSync(join(stage, 'package.json'), `${JSON.stringify(manifest, null, 2)}\n`);
// The JSON schema of gradient-probe.json (contributes.jsonValidation points at it).
cpSync(join(root, 'schemas'), join(stage, 'schemas'), { recursive: true });
// The marketplace page: a short README and the CHANGELOG (the repository README is for developers
// and CLI users), the icon, and the screenshots the README shows, taken by the editor tests.
copyFileSync(join(root, 'client/marketplace/README.md'), join(stage, 'README.md'));
copyFileSync(join(root, 'client/marketplace/CHANGELOG.md'), join(stage, 'CHANGELOG.md'));
mkdirSync(join(stage, 'images'), { recursive: true });
copyFileSync(join(root, ICON_SOURCE), join(stage, pkg.icon));
for (const image of readFileSync(join(root, 'client/marketplace/README.md'), 'utf8').matchAll(/\]\(images\/([\w-]+\.png)\)/g)) {
  const from = join(root, 'test/editor/screenshots', image[1]);
  if (!existsSync(from)) throw new Error(`the marketplace README shows images/${image[1]}, but ${from} is missing (npm run test:editor takes it)`);
  copyFileSync(from, join(stage, 'images', image[1]));
}
for (const file of ['client.js', 'sandbox-child.js', 'engine-in-sandbox.js', 'isolated-worker.js']) {
  const from = join(root, 'dist', file);
  if (!existsSync(from)) throw new Error(`dist/${file} is missing: run node esbuild.mjs first`);
  copyFileSync(from, join(stage, 'dist', file));
}

// The server with every package inside except esbuild (its JavaScript API spawns its binary).
await esbuild.build({
  entryPoints: [join(root, 'server/src/lsp/main.ts')],
  outfile: join(stage, 'dist', 'server.js'),
  bundle: true,
  platform: 'node',
  target: 'node20',
  format: 'cjs',
  external: ['esbuild'],
  logLevel: 'warning',
  legalComments: 'none',
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
for (const name of [
  'quickjs-emscripten',
  'quickjs-emscripten-core',
  '@jitl/quickjs-ffi-types',
  '@jitl/quickjs-wasmfile-release-sync',
  '@jitl/quickjs-wasmfile-release-asyncify',
  '@jitl/quickjs-wasmfile-debug-sync',
  '@jitl/quickjs-wasmfile-debug-asyncify',
]) {
  cpSync(join(root, 'node_modules', name), join(modules, name), { recursive: true, dereference: true });
}

// The project has no public repository URL yet, so README links stay as written (relative).
const args = ['package', '--no-dependencies', '--allow-missing-repository', '--no-rewrite-relative-links', '--out', out];
if (!existsSync(join(root, 'LICENSE'))) args.push('--skip-license');
execFileSync(process.execPath, [join(root, 'node_modules/@vscode/vsce/vsce'), ...args], { cwd: stage, stdio: 'inherit' });
console.log(`${out} (${(statSync(out).size / 1e6).toFixed(1)} MB)`);

/**
 * What the marketplace and the editor need from package.json: identity, engine, entry point,
 * icon (a PNG of at least 128×128), keywords, categories, a title for every command, a type and
 * description for every setting, and the marketplace README and CHANGELOG beside it.
 */
function checkManifest(manifest) {
  const missing = [];
  for (const field of ['name', 'displayName', 'description', 'version', 'publisher', 'license', 'main', 'icon']) {
    if (typeof manifest[field] !== 'string' || manifest[field].trim() === '') missing.push(`"${field}"`);
  }
  if (typeof manifest.engines?.vscode !== 'string') missing.push('"engines.vscode"');
  if (!Array.isArray(manifest.keywords) || manifest.keywords.length === 0) missing.push('"keywords"');
  if (!Array.isArray(manifest.categories) || manifest.categories.length === 0) missing.push('"categories"');
  if (typeof manifest.icon === 'string' && !/^images\/[\w-]+\.png$/.test(manifest.icon)) missing.push('"icon" as images/NAME.png (where the icon is staged)');
  {
    const icon = join(root, ICON_SOURCE);
    if (!existsSync(icon)) missing.push(`the icon file ${ICON_SOURCE}`);
    else {
      const png = readFileSync(icon);
      const isPng = png.subarray(1, 4).toString('ascii') === 'PNG';
      if (!isPng || png.readUInt32BE(16) < 128 || png.readUInt32BE(20) < 128) missing.push(`a PNG icon of at least 128×128 at ${ICON_SOURCE}`);
    }
  }
  for (const cmd of manifest.contributes?.commands ?? []) if (!cmd.title) missing.push(`a title for command ${cmd.command}`);
  for (const [key, setting] of Object.entries(manifest.contributes?.configuration?.properties ?? {})) {
    if (!setting.type || !(setting.markdownDescription || setting.description)) missing.push(`a type and description for setting ${key}`);
  }
  for (const file of ['client/marketplace/README.md', 'client/marketplace/CHANGELOG.md']) if (!existsSync(join(root, file))) missing.push(file);
  if (missing.length > 0) throw new Error(`package.json is not complete for packaging; missing: ${missing.join(', ')}`);
}
