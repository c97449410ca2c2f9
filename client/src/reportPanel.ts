// The report webview: one panel per op, filled from the server's last result for it (checking
// the op first when it has none), with scripts disabled and a strict content security policy.

import { randomBytes } from 'node:crypto';
import * as vscode from 'vscode';
import { Methods, type CheckOpsResult, type OpReportParams, type OpReportResult } from '../../server/src/lsp/protocol';
import type { ProbeContext } from './context';
import { esc, reportPage } from './reportHtml';

export class ReportPanels implements vscode.Disposable {
  private readonly panels = new Map<string, vscode.WebviewPanel>();

  constructor(private readonly ctx: ProbeContext) {}

  /** Opens (or refreshes) the report of one op; false when there is nothing to show. */
  async show(target: OpReportParams): Promise<boolean> {
    const client = this.ctx.running;
    if (!client) return false;
    let answer = await client.sendRequest<OpReportResult>(Methods.opReport, target);
    if (!answer.result && answer.reasonCode === 'not-checked') {
      const checked = await client.sendRequest<CheckOpsResult>(Methods.checkOps, { uri: target.uri, forwards: [target.forward] });
      answer = checked.results[0] ? await client.sendRequest<OpReportResult>(Methods.opReport, target) : { result: null, reason: checked.reason ?? answer.reason };
    }
    const key = `${target.uri}#${target.forward}`;
    let panel = this.panels.get(key);
    if (!panel) {
      panel = vscode.window.createWebviewPanel('gradientProbe.report', `Gradients: ${target.forward}`, vscode.ViewColumn.Beside, {
        enableScripts: false,
        localResourceRoots: [],
      });
      this.panels.set(key, panel);
      panel.onDidDispose(() => this.panels.delete(key));
    } else {
      panel.reveal(vscode.ViewColumn.Beside, true);
    }
    const nonce = randomBytes(16).toString('base64');
    if (answer.result) {
      panel.webview.html = reportPage({
        result: answer.result,
        fileLabel: vscode.workspace.asRelativePath(vscode.Uri.parse(target.uri)),
        nonce,
        cspSource: panel.webview.cspSource,
        ...(answer.tolerance !== undefined ? { tolerance: answer.tolerance } : {}),
      });
      return true;
    }
    panel.webview.html = `<!DOCTYPE html><html><head><meta http-equiv="Content-Security-Policy" content="default-src 'none';"></head><body><p>No report for ${esc(target.forward)}: ${esc(answer.reason ?? 'no result')}.</p></body></html>`;
    return false;
  }

  dispose(): void {
    for (const panel of this.panels.values()) panel.dispose();
    this.panels.clear();
  }
}
