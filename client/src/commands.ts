// Every command of the extension, from one table. Each has a sensible answer when the
// language server is not running or there is nothing to act on, instead of failing silently.

import * as vscode from 'vscode';
import type { LanguageClient } from 'vscode-languageclient/node';
import {
  ClientCommands,
  Methods,
  type CheckOpsParams,
  type CheckOpsResult,
  type CheckWorkspaceResult,
  type OpReportParams,
  type RegressionTestResult,
} from '../../server/src/lsp/protocol';
import type { CommandId } from './commandIds';
import type { ProbeContext } from './context';

interface CommandSpec {
  id: CommandId;
  run: (ctx: ProbeContext, ...args: unknown[]) => unknown;
}

/** How far below an op's name the cursor may be and still mean that op (a long forward's body). */
const OP_REACH_LINES = 60;

const NOT_RUNNING = 'The Gradient Probe language server is not running. See the "Gradient Probe" output, or run "Gradient Probe: Restart the Language Server".';

export const COMMANDS: readonly CommandSpec[] = [
  { id: 'gradientProbe.checkFile', run: (ctx, uri) => checkFile(ctx, uri) },
  { id: 'gradientProbe.checkWorkspace', run: (ctx) => checkWorkspace(ctx) },
  { id: ClientCommands.openReport, run: (ctx, uri, forward) => openReport(ctx, uri, forward) },
  { id: 'gradientProbe.copyRegressionTest', run: (ctx, uri, forward) => copyRegressionTest(ctx, uri, forward) },
  { id: 'gradientProbe.showOutput', run: (ctx) => ctx.output.show(true) },
  { id: 'gradientProbe.restartServer', run: (ctx) => ctx.restart() },
  { id: ClientCommands.goToOp, run: (_ctx, uri, line, character) => goToOp(uri, line, character) },
];

export function registerCommands(ctx: ProbeContext): vscode.Disposable[] {
  return COMMANDS.map((spec) =>
    vscode.commands.registerCommand(spec.id, async (...args: unknown[]) => {
      try {
        return await spec.run(ctx, ...args);
      } catch (err) {
        const message = err instanceof Error ? err.message : String(err);
        ctx.output.appendLine(`${spec.id} failed: ${message}`);
        void vscode.window.showErrorMessage(`Gradient Probe: ${message}`);
        return undefined;
      }
    }),
  );
}

function needClient(ctx: ProbeContext): LanguageClient | undefined {
  const client = ctx.running;
  if (!client) void vscode.window.showWarningMessage(NOT_RUNNING);
  return client;
}

async function checkFile(ctx: ProbeContext, uriArg: unknown): Promise<CheckOpsResult | undefined> {
  const uri = typeof uriArg === 'string' ? uriArg : uriArg instanceof vscode.Uri ? uriArg.toString() : vscode.window.activeTextEditor?.document.uri.toString();
  if (!uri) {
    void vscode.window.showInformationMessage('Gradient Probe: open a TypeScript file to check its ops.');
    return undefined;
  }
  const client = needClient(ctx);
  if (!client) return undefined;
  const params: CheckOpsParams = { uri, force: true };
  const answer = await client.sendRequest<CheckOpsResult>(Methods.checkOps, params);
  if (answer.reason) void vscode.window.showWarningMessage(`Gradient Probe: nothing checked: ${answer.reason}.`);
  else if (answer.results.length === 0) void vscode.window.showInformationMessage('Gradient Probe: this file has no annotated ops (a forward with a @backward tag).');
  else
    void vscode.window.showInformationMessage(`Gradient Probe: ${countsText(answer.results.map((r) => r.verdict))} in ${vscode.workspace.asRelativePath(vscode.Uri.parse(uri))}.`);
  return answer;
}

async function checkWorkspace(ctx: ProbeContext): Promise<CheckWorkspaceResult | undefined> {
  const client = needClient(ctx);
  if (!client) return undefined;
  const result = await vscode.window.withProgress(
    { location: vscode.ProgressLocation.Notification, title: 'Gradient Probe: checking the workspace', cancellable: true },
    async (progress, token) => {
      let last = 0;
      ctx.onWorkspaceProgress((p) => {
        const share = p.total > 0 ? (100 * p.done) / p.total : 100;
        progress.report({ increment: share - last, message: `${p.done}/${p.total} · ${p.file}` });
        last = share;
      });
      try {
        return await client.sendRequest<CheckWorkspaceResult>(Methods.checkWorkspace, {}, token);
      } finally {
        ctx.onWorkspaceProgress(undefined);
      }
    },
  );
  const counts = `${result.pass} pass, ${result.mismatch} mismatch, ${result.inconclusive} inconclusive, ${result.error} error`;
  const head = result.cancelled ? 'workspace check cancelled' : `checked ${result.files} file${result.files === 1 ? '' : 's'}`;
  const text = `Gradient Probe: ${head}: ${counts}.${result.reason ? ` ${result.reason}.` : ''}`;
  if (result.mismatch + result.error > 0) {
    void vscode.window.showWarningMessage(text, 'Show Problems').then((pick) => {
      if (pick) void vscode.commands.executeCommand('workbench.actions.view.problems');
    });
  } else {
    void vscode.window.showInformationMessage(text);
  }
  return result;
}

async function openReport(ctx: ProbeContext, uriArg: unknown, forwardArg: unknown): Promise<boolean> {
  const target = await pickOp(ctx, uriArg, forwardArg);
  if (!target) return false;
  if (!needClient(ctx)) return false;
  return ctx.reports.show(target);
}

async function copyRegressionTest(ctx: ProbeContext, uriArg: unknown, forwardArg: unknown): Promise<string | undefined> {
  const target = await pickOp(ctx, uriArg, forwardArg);
  if (!target) return undefined;
  const client = needClient(ctx);
  if (!client) return undefined;
  const answer = await client.sendRequest<RegressionTestResult>(Methods.regressionTest, target);
  if (!answer.snippet) {
    void vscode.window.showInformationMessage(`Gradient Probe: no regression test to copy: ${answer.reason ?? 'no result'}.`);
    return undefined;
  }
  try {
    await vscode.env.clipboard.writeText(answer.snippet);
    void vscode.window.showInformationMessage(`Gradient Probe: a mocha test reproducing the mismatch of ${target.forward} is on the clipboard.`);
  } catch {
    // A browser-hosted editor may refuse clipboard access: show the test instead.
    const doc = await vscode.workspace.openTextDocument({ language: 'typescript', content: answer.snippet });
    await vscode.window.showTextDocument(doc, { preview: true });
  }
  return answer.snippet;
}

/** The op a command is about: its arguments, else the op at or above the cursor, else a pick. */
async function pickOp(ctx: ProbeContext, uriArg: unknown, forwardArg: unknown): Promise<OpReportParams | undefined> {
  if (typeof uriArg === 'string' && typeof forwardArg === 'string') return { uri: uriArg, forward: forwardArg };
  const editor = vscode.window.activeTextEditor;
  if (!editor) {
    void vscode.window.showInformationMessage('Gradient Probe: open the file of the op first.');
    return undefined;
  }
  const uri = editor.document.uri.toString();
  const ops = ctx.knownOps(uri)?.ops ?? [];
  if (ops.length === 0) {
    void vscode.window.showInformationMessage('Gradient Probe: this file has no annotated ops that the server knows of.');
    return undefined;
  }
  const line = editor.selection.active.line;
  const above = ops.filter((o) => o.range.start.line <= line).sort((a, b) => b.range.start.line - a.range.start.line)[0];
  if (above && line - above.range.start.line < OP_REACH_LINES) return { uri, forward: above.forward };
  const pick = await vscode.window.showQuickPick(
    ops.map((o) => ({ label: o.forward, description: o.state })),
    { placeHolder: 'Which op?' },
  );
  return pick ? { uri, forward: pick.label } : undefined;
}

function countsText(verdicts: string[]): string {
  const counts = new Map<string, number>();
  for (const v of verdicts) counts.set(v, (counts.get(v) ?? 0) + 1);
  return [...counts].map(([v, n]) => `${n} ${v}`).join(', ');
}

/** The lens above a backward: reveals its forward's name. */
async function goToOp(uri: unknown, line: unknown, character: unknown): Promise<void> {
  if (typeof uri !== 'string' || typeof line !== 'number' || typeof character !== 'number') return;
  const at = new vscode.Position(line, character);
  await vscode.window.showTextDocument(vscode.Uri.parse(uri), { selection: new vscode.Range(at, at) });
}
