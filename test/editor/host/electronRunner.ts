// The same in-editor suites in a desktop VS Code downloaded by @vscode/test-electron (a dev
// dependency), for machines with internet access (`node test/editor/host/run.mjs --electron`).
// Here the download from Microsoft's update server fails without internet, so CI uses
// runner.ts (code-server + Chromium).

import { cpSync, existsSync, mkdtempSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { screenshotFlag } from '../suite/screenshotSignal';
import { linkRepositoryPackages } from './demoPackages';

/** The part of @vscode/test-electron's API used here (loaded at run time, so the CI runner never needs it). */
interface TestElectron {
  runTests(options: { extensionDevelopmentPath: string; extensionTestsPath: string; launchArgs?: string[]; version?: string }): Promise<number>;
}

/** Screenshots the suites ask for (see suite/*Suite.ts). */
const SCREENSHOT_NAMES = ['report', 'problems', 'untrusted', 'completion', 'quickfix'];

/** The VS Code release the suites were written against (the code-server host ships the same). */
const VSCODE_VERSION = '1.100.3';

export async function main(root: string): Promise<number> {
  let electron: TestElectron;
  try {
    // eslint-disable-next-line @typescript-eslint/no-require-imports
    electron = require('@vscode/test-electron') as TestElectron;
  } catch {
    process.stderr.write('test:editor --electron needs @vscode/test-electron (a dev dependency): run npm ci\n');
    return 2;
  }
  const scratch = mkdtempSync(join(tmpdir(), 'gradient-probe-electron-'));
  let worst = 0;
  const suites = [
    { name: 'trusted', trust: false },
    { name: 'untrusted', trust: true },
    { name: 'writing', trust: false, workspace: join(root, 'test', 'fixtures', 'lsp-writing') },
  ];
  for (const suite of suites) {
    const workspace = join(scratch, `workspace-${suite.name}`);
    cpSync(suite.workspace ?? demoWorkspace(root), workspace, { recursive: true });
    linkRepositoryPackages(root, workspace);
    // No page to photograph here: tell the suites up front that their screenshots are "taken".
    for (const name of SCREENSHOT_NAMES) writeFileSync(screenshotFlag(workspace, name), 'not taken: desktop host\n');
    const code = await electron
      .runTests({
        version: VSCODE_VERSION,
        extensionDevelopmentPath: root,
        extensionTestsPath: join(root, 'dist', 'editor-suite', suite.name),
        launchArgs: [workspace, '--disable-extensions', ...(suite.trust ? [] : ['--disable-workspace-trust'])],
      })
      .catch((err: unknown) => {
        process.stderr.write(`${suite.name}: ${err instanceof Error ? err.message : String(err)}\n`);
        return 1;
      });
    worst = Math.max(worst, code);
  }
  return worst;
}

function demoWorkspace(root: string): string {
  const examples = join(root, 'examples');
  const hasOps =
    existsSync(examples) &&
    readdirSync(examples, { recursive: true, encoding: 'utf8' }).some((f) => f.endsWith('.ts') && readFileSync(join(examples, f), 'utf8').includes('@backward'));
  return hasOps ? examples : join(root, 'test', 'fixtures', 'lsp');
}
