// Shared pieces of the in-editor suites: reaching the extension's API, waiting for the
// server's results through the editor's own commands, and the processes under the extension host.

import { existsSync, readdirSync, readFileSync } from 'node:fs';
import * as vscode from 'vscode';
import type { ProbeApi } from '../../../client/src/context';
import { SCREENSHOT_MARKER, screenshotFlag } from './screenshotSignal';

export const EXTENSION_ID = 'gradient-probe.gradient-probe';

export async function probeApi(): Promise<ProbeApi> {
  const ext = vscode.extensions.getExtension<ProbeApi>(EXTENSION_ID);
  if (!ext) throw new Error(`extension ${EXTENSION_ID} is not installed in this host`);
  const api = await ext.activate();
  await api.ready();
  return api;
}

/** Polls `test` until it returns something truthy; the failure names what was awaited and the last value seen. */
export async function waitFor<T>(what: string, test: () => Promise<T | undefined | false> | T | undefined | false, timeoutMs = 90_000): Promise<T> {
  const end = Date.now() + timeoutMs;
  let last: unknown;
  for (;;) {
    const value = await test();
    if (value) return value;
    last = value;
    if (Date.now() > end) throw new Error(`timed out after ${timeoutMs} ms waiting for ${what} (last: ${JSON.stringify(last)})`);
    await new Promise((r) => setTimeout(r, 250));
  }
}

export function workspaceRoot(): vscode.Uri {
  const folder = vscode.workspace.workspaceFolders?.[0];
  if (!folder) throw new Error('the host opened no folder');
  return folder.uri;
}

/** The annotated source files of the workspace (those with a `@backward` tag). */
export async function annotatedFiles(): Promise<vscode.Uri[]> {
  const all = await vscode.workspace.findFiles('**/*.ts', '**/node_modules/**');
  const out: vscode.Uri[] = [];
  for (const uri of all) {
    const text = Buffer.from(await vscode.workspace.fs.readFile(uri)).toString('utf8');
    if (text.includes('@backward')) out.push(uri);
  }
  return out.sort((a, b) => a.fsPath.localeCompare(b.fsPath));
}

export async function lensTitles(uri: vscode.Uri): Promise<string[]> {
  const lenses = (await vscode.commands.executeCommand<vscode.CodeLens[]>('vscode.executeCodeLensProvider', uri)) ?? [];
  return lenses.map((l) => l.command?.title ?? '').filter((t) => t !== '');
}

export function probeDiagnostics(uri: vscode.Uri, code?: string): vscode.Diagnostic[] {
  return vscode.languages.getDiagnostics(uri).filter((d) => d.source === 'gradient-probe' && (code === undefined || diagnosticCode(d) === code));
}

export function diagnosticCode(d: vscode.Diagnostic): string {
  const code = d.code;
  return typeof code === 'object' && code !== null ? String(code.value) : String(code);
}

/** The language server process (a child of this extension host running dist/server.js). */
export function serverPid(): number | undefined {
  return childrenOf(process.pid).find((pid) => {
    try {
      return readFileSync(`/proc/${pid}/cmdline`, 'utf8').includes('server.js');
    } catch {
      return false;
    }
  });
}

export function childrenOf(parent: number): number[] {
  const out: number[] = [];
  for (const entry of readdirSync('/proc')) {
    if (!/^\d+$/.test(entry)) continue;
    try {
      const stat = readFileSync(`/proc/${entry}/stat`, 'utf8');
      if (Number(stat.slice(stat.lastIndexOf(')') + 2).split(' ')[1]) === parent) out.push(Number(entry));
    } catch {
      // gone while we looked
    }
  }
  return out;
}

/** Position of the first `needle` in a document. */
export function positionOf(doc: vscode.TextDocument, needle: string): vscode.Position {
  const at = doc.getText().indexOf(needle);
  if (at < 0) throw new Error(`"${needle}" not in ${doc.uri.fsPath}`);
  return doc.positionAt(at);
}

/** Runs the mocha tests that `define` declares, inside the extension host. */
export function runMocha(define: () => void): Promise<void> {
  // eslint-disable-next-line @typescript-eslint/no-require-imports
  const Mocha = require('mocha') as typeof import('mocha');
  const mocha = new Mocha({ ui: 'bdd', color: false, timeout: 180_000, reporter: 'spec' });
  mocha.suite.emit('pre-require', globalThis, 'in-editor suite', mocha);
  define();
  return new Promise((resolve, reject) => {
    mocha.run((failures) => (failures > 0 ? reject(new Error(`${failures} in-editor test(s) failed`)) : resolve()));
  });
}

/**
 * Asks the runner for a screenshot named `name` while this extension host still lives (when it
 * exits, the editor drops its diagnostics and status bar item) and waits until it was taken.
 */
export async function requestScreenshot(name: string): Promise<void> {
  await vscode.commands.executeCommand('notifications.clearAll');
  await new Promise((r) => setTimeout(r, 1500)); // let squiggles, lenses, panels and webviews paint
  console.log(`${SCREENSHOT_MARKER} ${name}`);
  const flag = screenshotFlag(workspaceRoot().fsPath, name);
  await waitFor(`the runner to take screenshot ${name}`, () => existsSync(flag), 30_000).catch(() => console.log(`screenshot ${name} was not taken`));
}
