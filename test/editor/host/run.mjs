// Entry of `npm run test:editor` (after `node esbuild.mjs`): bundles the TypeScript runner and
// the in-editor suites with esbuild, then runs the runner and exits with the suites' code.
// `--electron` runs the suites in a downloaded desktop VS Code instead (needs internet);
// `--suite=NAME` runs one suite of the code-server host (while developing it).
import * as esbuild from 'esbuild';
import { createRequire } from 'node:module';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = resolve(dirname(fileURLToPath(import.meta.url)), '..', '..', '..');
const electron = process.argv.includes('--electron');
const common = { bundle: true, platform: 'node', target: 'node20', format: 'cjs', sourcemap: true, logLevel: 'warning' };
const runner = electron ? 'electronRunner' : 'runner';
await esbuild.build({ ...common, entryPoints: { [runner]: join(root, `test/editor/host/${runner}.ts`) }, outdir: join(root, 'dist/editor-host'), packages: 'external' });
// Loaded by the extension host: `vscode` comes from the host, mocha from the repository's node_modules.
await esbuild.build({
  ...common,
  entryPoints: {
    trusted: join(root, 'test/editor/suite/trustedSuite.ts'),
    untrusted: join(root, 'test/editor/suite/untrustedSuite.ts'),
    isolated: join(root, 'test/editor/suite/isolatedSuite.ts'),
    writing: join(root, 'test/editor/suite/writingSuite.ts'),
  },
  outdir: join(root, 'dist/editor-suite'),
  external: ['vscode', 'mocha'],
});
const require = createRequire(import.meta.url);
const { main } = require(join(root, `dist/editor-host/${runner}.js`));
const only = process.argv.find((a) => a.startsWith('--suite='))?.slice('--suite='.length);
process.exit(await main(root, only));
