// Entry of the VS Code extension: hands everything to one ProbeContext, which owns the
// language client and every disposable, so activation and deactivation stay this small.

import type * as vscode from 'vscode';
import { ProbeContext, type ProbeApi } from './context';

let probe: ProbeContext | undefined;

export async function activate(context: vscode.ExtensionContext): Promise<ProbeApi> {
  probe = new ProbeContext(context);
  context.subscriptions.push(probe);
  await probe.start();
  return probe.api;
}

export async function deactivate(): Promise<void> {
  await probe?.stop();
  probe = undefined;
}
