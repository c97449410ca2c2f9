// The extension's own tests in a real extension host on an untrusted copy of the demo, with the
// user's opt-in to the isolated interpreter: the installed .vsix must check ops there (QuickJS
// in a worker thread), label every result as such, and start no runner process.

import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import * as vscode from 'vscode';
import { annotatedFiles, childrenOf, lensTitles, probeApi, probeDiagnostics, runMocha, serverPid, waitFor } from './helpers';

export function run(): Promise<void> {
  return runMocha(() => {
    describe('Gradient Probe in an untrusted workspace with the isolated interpreter', () => {
      it('finds the demo bug in the interpreter and says the result comes from there', async () => {
        assert.equal(vscode.workspace.isTrusted, false);
        assert.equal(vscode.workspace.getConfiguration('gradientProbe').get('isolatedWhenUntrusted'), true);
        const api = await probeApi();
        const files = await annotatedFiles();
        const buggy = files.find((u) => readFileSync(u.fsPath, 'utf8').includes('// DEMO BUG:'));
        assert.ok(buggy, 'the demo marks a bug');
        await vscode.window.showTextDocument(await vscode.workspace.openTextDocument(buggy));
        const diag = await waitFor('a mismatch found in the interpreter', () => probeDiagnostics(buggy, 'gradient-mismatch')[0], 120_000);
        assert.match(diag.message, /\[isolated interpreter\]$/);
        const titles = await lensTitles(buggy);
        assert.ok(
          titles.some((t) => /^✗ mismatch .* · isolated interpreter$/.test(t)),
          titles.join(' | '),
        );
        assert.equal(api.status()?.isolated, true);
        // No sandbox runner process: only esbuild's bundling service may sit under the server.
        const runners = childrenOf(serverPid()!).filter((pid) => {
          try {
            return readFileSync(`/proc/${pid}/cmdline`, 'utf8').includes('sandbox-child');
          } catch {
            return false;
          }
        });
        assert.deepEqual(runners, []);
      });
    });
  });
}
