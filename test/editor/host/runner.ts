// `npm run test:editor`: runs the extension's in-editor suites in a real VS Code extension host.
// VS Code for the browser (code-server from the npm registry) serves the workbench on
// 127.0.0.1, Debian's Chromium drives it headless, and the installed .vsix is the extension
// under test. Installs what is missing, packages, runs each suite, screenshots the editor, and
// exits with the suites' code. The steps are described in test/editor/README.md.

import { format } from 'node:util';
import { execFileSync, spawn, type ChildProcess } from 'node:child_process';
import { cpSync, existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { screenshotFlag, screenshotRequest } from '../suite/screenshotSignal';
import { linkRepositoryPackages } from './demoPackages';

/** Last release of code-server that runs on Node 20 (VS Code 1.100.3; later ones need Node 22+). */
const CODE_SERVER_VERSION = '4.100.3';
/** The ripgrep build code-server's installer fetches; we seed its cache from Debian's `rg`. */
const RIPGREP_CACHE = { dir: 'vscode-ripgrep-cache-1.15.11', file: 'ripgrep-v13.0.0-10-x86_64-unknown-linux-musl.tar.gz' };
const CHROMIUM = '/usr/bin/chromium';
/** A host that never reports an exit code is stopped after this long (the recipe saw 20–35 s runs). */
const WATCHDOG_MS = 300_000;

const HOST_SETTINGS = {
  'files.autoSave': 'off',
  'workbench.startupEditor': 'none',
  'workbench.tips.enabled': false,
  'telemetry.telemetryLevel': 'off',
  'editor.codeLens': true,
};

interface SuiteRun {
  name: string;
  /** Folder trust on: the host opens the workspace untrusted. */
  trustPrompt: boolean;
  /** User settings for this run on top of HOST_SETTINGS. */
  settings?: Record<string, unknown>;
  /** The folder to copy as the workspace, relative to the repository (default: the demo). */
  workspace?: string;
}

export async function main(root: string, only?: string): Promise<number> {
  const codeServer = ensureCodeServer(join(root, '.editor-host'));
  const vsix = packageExtension(root);
  const scratch = mkdtempSync(join(tmpdir(), 'gradient-probe-editor-'));
  const env = hostEnv(scratch);
  const dirs = { userData: join(scratch, 'user-data'), extensions: join(scratch, 'extensions') };
  log(`installing ${vsix}`);
  execFileSync(codeServer, ['--user-data-dir', dirs.userData, '--extensions-dir', dirs.extensions, '--install-extension', vsix], { env, stdio: 'inherit' });
  const extensionDir = readdirSync(dirs.extensions)
    .map((d) => join(dirs.extensions, d))
    .find((d) => existsSync(join(d, 'package.json')) && d.includes('gradient-probe'));
  if (!extensionDir) throw new Error(`the .vsix did not install into ${dirs.extensions}`);

  const shots = join(root, 'test', 'editor', 'screenshots');
  mkdirSync(shots, { recursive: true });
  const runs: SuiteRun[] = [
    { name: 'trusted', trustPrompt: false },
    { name: 'untrusted', trustPrompt: true },
    { name: 'isolated', trustPrompt: true, settings: { 'gradientProbe.isolatedWhenUntrusted': true } },
    { name: 'writing', trustPrompt: false, workspace: 'test/fixtures/lsp-writing' },
  ];
  let worst = 0;
  if (only !== undefined && !runs.some((r) => r.name === only)) throw new Error(`no suite named ${only}; the suites: ${runs.map((r) => r.name).join(', ')}`);
  for (const run of runs.filter((r) => only === undefined || r.name === only)) {
    // A fresh copy per run: the suites edit and save files, and trust is remembered per folder.
    const workspace = join(scratch, `workspace-${run.name}`);
    cpSync(run.workspace ? join(root, run.workspace) : demoWorkspace(root), workspace, { recursive: true });
    linkRepositoryPackages(root, workspace);
    // Editor settings that keep the runs deterministic (no auto-save behind the suite's back,
    // no start page over the editor in the screenshot), plus the run's own.
    mkdirSync(join(dirs.userData, 'User'), { recursive: true });
    writeFileSync(join(dirs.userData, 'User', 'settings.json'), `${JSON.stringify({ ...HOST_SETTINGS, ...run.settings }, null, 2)}\n`);
    const code = await runSuite({ root, codeServer, env, dirs, extensionDir, workspace, run, shots });
    log(`suite ${run.name}: exit code ${code}`);
    worst = Math.max(worst, code);
  }
  return worst;
}

/** The demo workspace when it holds annotated ops, else the language-server fixtures. */
function demoWorkspace(root: string): string {
  const examples = join(root, 'examples');
  const hasOps = (dir: string): boolean =>
    existsSync(dir) && readdirSync(dir, { recursive: true, encoding: 'utf8' }).some((f) => f.endsWith('.ts') && readFileSync(join(dir, f), 'utf8').includes('@backward'));
  return hasOps(examples) ? examples : join(root, 'test', 'fixtures', 'lsp');
}

async function runSuite(o: {
  root: string;
  codeServer: string;
  env: NodeJS.ProcessEnv;
  dirs: { userData: string; extensions: string };
  extensionDir: string;
  workspace: string;
  run: SuiteRun;
  shots: string;
}): Promise<number> {
  const port = await freePort();
  const args = [
    '--bind-addr',
    `127.0.0.1:${port}`,
    '--auth',
    'none',
    '--disable-telemetry',
    '--disable-update-check',
    '--disable-getting-started-override',
    '--disable-proxy',
    '--ignore-last-opened',
    '--user-data-dir',
    o.dirs.userData,
    '--extensions-dir',
    o.dirs.extensions,
    ...(o.run.trustPrompt ? [] : ['--disable-workspace-trust']),
    o.workspace,
  ];
  const server = spawn(o.codeServer, args, { env: o.env, stdio: ['ignore', 'pipe', 'pipe'] });
  const serverLog: string[] = [];
  server.stdout!.on('data', (d: Buffer) => serverLog.push(d.toString()));
  server.stderr!.on('data', (d: Buffer) => serverLog.push(d.toString()));
  // eslint-disable-next-line @typescript-eslint/no-require-imports
  const { chromium } = require('playwright-core') as typeof import('playwright-core');
  const profile = mkdtempSync(join(tmpdir(), 'gradient-probe-chromium-'));
  let context: import('playwright-core').BrowserContext | undefined;
  try {
    await waitForHealth(port, server, serverLog);
    context = await chromium.launchPersistentContext(profile, {
      executablePath: CHROMIUM,
      headless: true,
      viewport: { width: 1400, height: 900 },
      args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
    });
    // Nothing leaves the machine: every request not to the local host is refused.
    await context.route('**/*', (route) => {
      const url = new URL(route.request().url());
      return url.hostname === '127.0.0.1' || url.protocol === 'data:' || url.protocol === 'blob:' ? route.continue() : route.abort();
    });
    const page = context.pages()[0] ?? (await context.newPage());
    let exitCode: number | undefined;
    const exited = new Promise<number>((resolveExit) => {
      void page.exposeFunction('codeAutomationExit', (code: number) => {
        exitCode = code;
        resolveExit(code);
      });
    });
    const shots: Promise<void>[] = [];
    await page.exposeFunction('codeAutomationLog', (_type: string, args: unknown[]) => {
      // Mocha in the host logs printf-style ('%d passing (%s)', n, t): format like console does.
      const line = format(...(Array.isArray(args) ? args : [args]));
      process.stdout.write(`  [${o.run.name}] ${line}\n`);
      // The suite asks for a picture while its extension host still shows everything.
      const name = screenshotRequest(line);
      if (name) shots.push(takeScreenshot(page, join(o.shots, `${name}.png`), screenshotFlag(o.workspace, name)));
    });
    const remote = (p: string): string => `vscode-remote://127.0.0.1:${port}${p}`;
    const payload = [
      ['extensionDevelopmentPath', remote(o.extensionDir)],
      ['extensionTestsPath', remote(join(o.root, 'dist', 'editor-suite', `${o.run.name}`))],
      ['skipWelcome', 'true'],
    ];
    const url = `http://127.0.0.1:${port}/?folder=${encodeURIComponent(o.workspace)}&payload=${encodeURIComponent(JSON.stringify(payload))}`;
    log(`suite ${o.run.name}: opening the workbench on port ${port}`);
    await page.goto(url);
    const code = await Promise.race([exited, new Promise<number>((r) => setTimeout(() => r(124), WATCHDOG_MS))]);
    if (exitCode === undefined) log(`suite ${o.run.name}: no exit code after ${WATCHDOG_MS} ms; stopped by the watchdog`);
    await Promise.all(shots);
    return code;
  } catch (err) {
    log(`suite ${o.run.name} could not run: ${err instanceof Error ? (err.stack ?? err.message) : String(err)}`);
    log(serverLog.join('').slice(-3000));
    return 1;
  } finally {
    await context?.close().catch(() => undefined);
    server.kill('SIGTERM');
  }
}

/** Photographs the workbench and reports what the user would see in it, then lets the suite go on. */
async function takeScreenshot(page: import('playwright-core').Page, path: string, flag: string): Promise<void> {
  try {
    // A freshly opened editor asks for its lenses after it paints; give them a moment to appear.
    await page
      .locator('.codelens-decoration')
      .first()
      .waitFor({ timeout: 10_000 })
      .catch(() => undefined);
    await page.screenshot({ path });
    log(`screenshot: ${path}`);
    const texts = async (selector: string): Promise<string> =>
      (
        await page
          .locator(selector)
          .allInnerTexts()
          .catch(() => [] as string[])
      )
        .map((t) => t.replace(/\s+/g, ' ').trim())
        .filter(Boolean)
        .slice(0, 6)
        .join(' | ') || '(none)';
    log(`  code lenses on screen: ${await texts('.codelens-decoration')}`);
    log(`  Problems panel rows: ${await texts('.markers-panel .monaco-list-row')}`);
    log(`  status bar: ${await texts('.statusbar-item')}`);
  } catch (err) {
    log(`screenshot failed: ${err instanceof Error ? err.message : String(err)}`);
  } finally {
    writeFileSync(flag, 'taken\n');
  }
}

/** Installs code-server into `dir` when it is missing (Debian packages first, as root). */
function ensureCodeServer(dir: string): string {
  const bin = join(dir, 'node_modules', '.bin', 'code-server');
  if (existsSync(bin) && existsSync(CHROMIUM)) return bin;
  if (!existsSync(CHROMIUM) || !hasCommand('rg')) {
    log('installing Debian packages: chromium ripgrep libkrb5-dev build-essential python3');
    execFileSync('apt-get', ['update'], { stdio: 'inherit' });
    execFileSync('apt-get', ['install', '-y', '--no-install-recommends', 'chromium', 'ripgrep', 'libkrb5-dev', 'build-essential', 'python3'], {
      stdio: 'inherit',
      env: { ...process.env, DEBIAN_FRONTEND: 'noninteractive' },
    });
  }
  if (!existsSync(bin)) {
    // code-server's installer downloads ripgrep from GitHub unless its cache already holds it.
    const cache = join(process.env.TMPDIR ?? tmpdir(), RIPGREP_CACHE.dir);
    mkdirSync(cache, { recursive: true });
    const tarball = join(cache, RIPGREP_CACHE.file);
    if (!existsSync(tarball)) execFileSync('tar', ['czf', tarball, '-C', '/usr/bin', 'rg']);
    mkdirSync(dir, { recursive: true });
    // npm 11 runs a dependency's install scripts only when the project allows them by name.
    writeFileSync(join(dir, 'package.json'), `${JSON.stringify({ private: true, allowScripts: { 'code-server': true, argon2: true } }, null, 2)}\n`);
    log(`installing code-server@${CODE_SERVER_VERSION} into ${dir} (a few minutes)`);
    execFileSync('npm', ['install', '--prefix', dir, '--no-save', '--no-audit', '--no-fund', `code-server@${CODE_SERVER_VERSION}`], {
      stdio: 'inherit',
      env: { ...process.env, npm_config_unsafe_perm: 'true', npm_config_nodedir: '/usr', npm_config_yes: 'true' },
    });
  }
  if (!existsSync(bin)) throw new Error(`code-server did not install into ${dir}`);
  return bin;
}

function packageExtension(root: string): string {
  log('packaging the .vsix');
  execFileSync(process.execPath, [join(root, 'tools', 'package-vsix.mjs')], { cwd: root, stdio: ['ignore', 'ignore', 'inherit'] });
  const pkg = JSON.parse(readFileSync(join(root, 'package.json'), 'utf8')) as { name: string; version: string };
  return join(root, `${pkg.name}-${pkg.version}.vsix`);
}

/** code-server writes its config even for --version; keep it, and the gallery, out of the user's home. */
function hostEnv(scratch: string): NodeJS.ProcessEnv {
  return {
    ...process.env,
    EXTENSIONS_GALLERY: '{}',
    XDG_CONFIG_HOME: join(scratch, 'xdg-config'),
    XDG_DATA_HOME: join(scratch, 'xdg-data'),
  };
}

async function waitForHealth(port: number, server: ChildProcess, serverLog: string[]): Promise<void> {
  const end = Date.now() + 60_000;
  while (Date.now() < end) {
    if (server.exitCode !== null) throw new Error(`code-server exited (${server.exitCode}): ${serverLog.join('').slice(-2000)}`);
    try {
      const res = await fetch(`http://127.0.0.1:${port}/healthz`);
      if (res.ok) return;
    } catch {
      // not listening yet
    }
    await new Promise((r) => setTimeout(r, 250));
  }
  throw new Error('code-server did not become healthy within 60 s');
}

function freePort(): Promise<number> {
  return new Promise((resolvePort, reject) => {
    const srv = createServer();
    srv.once('error', reject);
    srv.listen(0, '127.0.0.1', () => {
      const address = srv.address();
      const port = typeof address === 'object' && address ? address.port : 0;
      srv.close(() => resolvePort(port));
    });
  });
}

function hasCommand(name: string): boolean {
  try {
    execFileSync('sh', ['-c', `command -v ${name}`], { stdio: 'ignore' });
    return true;
  } catch {
    return false;
  }
}

function log(line: string): void {
  process.stdout.write(`test:editor: ${line}\n`);
}

export function repoRootFrom(dir: string): string {
  let d = resolve(dir);
  while (!existsSync(join(d, 'package.json')) || !existsSync(join(d, 'esbuild.mjs'))) {
    const parent = resolve(d, '..');
    if (parent === d) throw new Error('repository root not found');
    d = parent;
  }
  return d;
}
