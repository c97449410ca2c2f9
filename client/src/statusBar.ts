// The status bar item: how many ops pass, mismatch and are being checked right now, or why
// nothing runs. Clicking it shows the Problems panel, where the failing ops are listed.

import * as vscode from 'vscode';
import type { StatusParams } from '../../server/src/lsp/protocol';

export class ProbeStatusBar implements vscode.Disposable {
  private readonly item = vscode.window.createStatusBarItem('gradientProbe.status', vscode.StatusBarAlignment.Left, 10);

  constructor() {
    this.item.name = 'Gradient Probe';
    this.item.command = 'workbench.actions.view.problems';
    this.item.show();
  }

  showStarting(): void {
    this.item.text = '$(sync~spin) gradients';
    this.item.tooltip = 'Gradient Probe: starting the language server…';
    this.item.backgroundColor = undefined;
  }

  showStopped(reason: string): void {
    this.item.text = '$(debug-disconnect) gradients';
    this.item.tooltip = `Gradient Probe: the language server is not running (${reason}). Run "Gradient Probe: Restart the Language Server".`;
    this.item.command = 'gradientProbe.restartServer';
    this.item.backgroundColor = new vscode.ThemeColor('statusBarItem.warningBackground');
  }

  update(status: StatusParams): void {
    this.item.command = 'workbench.actions.view.problems';
    if (!status.trusted && !status.isolated) {
      this.item.text = '$(shield) gradients: not run';
      this.item.tooltip = 'Gradient Probe runs the code it checks, so it does nothing in an untrusted workspace. Trust this folder to check its gradients.';
      this.item.command = 'workbench.trust.manage';
      this.item.backgroundColor = undefined;
      return;
    }
    // The verdict words of the CLI and the JSON report, so every surface reads the same.
    const parts = [`$(pass) ${status.pass} pass`, `$(error) ${status.mismatch} mismatch`];
    if (status.inconclusive > 0) parts.push(`$(question) ${status.inconclusive} inconclusive`);
    if (status.error > 0) parts.push(`$(warning) ${status.error} error`);
    if (status.checking > 0) parts.push(`$(sync~spin) ${status.checking}`);
    this.item.text = `gradients${status.isolated ? ' (isolated)' : ''} ${parts.join(' ')}`;
    this.item.tooltip = [
      status.isolated ? 'Gradient Probe — untrusted workspace: checks run in the isolated interpreter (slower, small ops only)' : 'Gradient Probe',
      `${status.pass} pass · ${status.mismatch} mismatch · ${status.inconclusive} inconclusive · ${status.error} error`,
      status.checking > 0 ? `${status.checking} being checked now` : '',
    ]
      .filter(Boolean)
      .join('\n');
    this.item.backgroundColor = status.mismatch > 0 ? new vscode.ThemeColor('statusBarItem.errorBackground') : undefined;
  }

  dispose(): void {
    this.item.dispose();
  }
}
