// The extension's own tests in a real extension host on an untrusted copy of the demo
// workspace: nothing may run (no runner process, no verdict), and every place that would show a
// result says why and what to do.

import assert from 'node:assert/strict';
import * as vscode from 'vscode';
import type { CheckOpsResult, CheckWorkspaceResult } from '../../../server/src/lsp/protocol';
import { annotatedFiles, childrenOf, lensTitles, probeApi, probeDiagnostics, requestScreenshot, runMocha, serverPid, waitFor } from './helpers';

export function run(): Promise<void> {
  return runMocha(() => {
    describe('Gradient Probe in an untrusted workspace', () => {
      it('runs no code and says why, in diagnostics, lenses, commands and the status', async () => {
        assert.equal(vscode.workspace.isTrusted, false, 'the host opened the folder untrusted');
        const api = await probeApi();
        const files = await annotatedFiles();
        assert.ok(files.length > 0);
        const uri = files[0]!;
        const doc = await vscode.workspace.openTextDocument(uri);
        await vscode.window.showTextDocument(doc);
        const notices = await waitFor('the untrusted-workspace notices', () => {
          const d = probeDiagnostics(uri, 'untrusted-workspace');
          return d.length > 0 ? d : undefined;
        });
        assert.equal(notices[0]!.severity, vscode.DiagnosticSeverity.Information);
        assert.match(notices[0]!.message, /not trusted/);
        assert.equal(probeDiagnostics(uri, 'gradient-mismatch').length, 0);
        // Every op's lens says why nothing ran (the lenses above backwards only navigate).
        const titles = (await lensTitles(uri)).filter((t) => !/^(backward|jacobian|tangent|hessian) of /.test(t));
        assert.ok(titles.length > 0 && titles.every((t) => /not trusted|annotation error/.test(t)), titles.join(' | '));

        const file = await vscode.commands.executeCommand<CheckOpsResult>('gradientProbe.checkFile', uri.toString());
        assert.equal(file?.results.length, 0);
        assert.match(file?.reason ?? '', /not trusted/);
        const all = await vscode.commands.executeCommand<CheckWorkspaceResult>('gradientProbe.checkWorkspace');
        assert.equal((all?.pass ?? 0) + (all?.mismatch ?? 0), 0);
        assert.equal(api.status()?.trusted, false);

        // Nothing executed: the server is up but never started a runner process.
        const server = serverPid();
        assert.ok(server, 'the server runs');
        assert.deepEqual(childrenOf(server), []);
        await vscode.commands.executeCommand('workbench.actions.view.problems');
        await requestScreenshot('untrusted');
      });
    });
  });
}
