// The extension's own tests inside a real VS Code extension host (code-server), on a copy of
// the demo workspace with workspace trust off: the installed .vsix must check the demo's ops
// and show the results through the editor's diagnostics, code lenses, hovers, commands and
// Testing view. Expected verdicts come from the demo's own labels: every `// DEMO BUG:`
// comment marks one op whose backward is wrong.

import assert from 'node:assert/strict';
import * as vscode from 'vscode';
import type { CheckWorkspaceResult } from '../../../server/src/lsp/protocol';
import { annotatedFiles, childrenOf, lensTitles, positionOf, probeApi, probeDiagnostics, requestScreenshot, runMocha, serverPid, waitFor } from './helpers';

/** The lens title of a finished verdict (see server/src/lsp/codeLens.ts). */
const VERDICT_LENS = /^(✓ ((jacobian|tangent|hessian) )?pass|✗ ((jacobian|tangent|hessian) )?mismatch|\? inconclusive|! error)/;
/** A mismatch lens of any derivative kind. */
const MISMATCH_LENS = /^✗ ((jacobian|tangent|hessian) )?mismatch/;

function bugMarkers(text: string): number {
  return text.split('// DEMO BUG:').length - 1;
}

export function run(): Promise<void> {
  return runMocha(() => {
    describe('Gradient Probe in a trusted workspace', () => {
      const opened = new Map<string, vscode.TextDocument>();

      afterEach(async function () {
        if (this.currentTest?.state === 'failed') console.log(`extension log (last lines):\n${(await probeApi()).logTail().join('\n')}`);
      });

      it('activates and starts its language server', async () => {
        console.log(`VS Code ${vscode.version}, UI kind ${vscode.env.uiKind === vscode.UIKind.Web ? 'web' : 'desktop'}`);
        assert.equal(vscode.workspace.isTrusted, true);
        const api = await probeApi();
        // The server sends its counts once it is initialized, before any file is open.
        const status = await waitFor('a status from the server', () => api.status());
        assert.equal(status.trusted, true);
        assert.ok(serverPid(), 'the server runs as a child process of the extension host');
      });

      it('marks a mismatch on every op the demo labels as buggy after a save, and only there', async () => {
        const files = await annotatedFiles();
        assert.ok(files.length >= 3, `annotated files found: ${files.map((f) => f.fsPath).join(', ')}`);
        for (const uri of files) {
          const doc = await vscode.workspace.openTextDocument(uri);
          await vscode.window.showTextDocument(doc, { preview: false });
          // Touch and save, as a user would: the save starts the check.
          const edit = new vscode.WorkspaceEdit();
          edit.insert(uri, doc.lineAt(doc.lineCount - 1).range.end, '\n');
          assert.ok(await vscode.workspace.applyEdit(edit), `editing ${uri.fsPath}`);
          assert.ok(doc.isDirty, `${uri.fsPath} is dirty after the edit`);
          assert.ok(await doc.save(), `saving ${uri.fsPath}`);
          opened.set(uri.toString(), doc);
        }
        for (const uri of files) {
          const doc = opened.get(uri.toString())!;
          const expected = bugMarkers(doc.getText());
          const titles = await waitFor(`every op of ${vscode.workspace.asRelativePath(uri)} to have a verdict`, async () => {
            const t = await lensTitles(uri);
            const verdicts = t.filter((x) => VERDICT_LENS.test(x));
            return verdicts.length > 0 && !t.some((x) => /checking…|not checked yet/.test(x)) ? t : undefined;
          });
          const mismatches = await waitFor(
            `${expected} mismatch diagnostic(s) in ${vscode.workspace.asRelativePath(uri)}`,
            () => {
              const d = probeDiagnostics(uri, 'gradient-mismatch');
              return d.length === expected ? d : undefined;
            },
            15_000,
          );
          assert.equal(titles.filter((t) => MISMATCH_LENS.test(t)).length, expected, titles.join(' | '));
          for (const d of mismatches) {
            assert.equal(d.severity, vscode.DiagnosticSeverity.Error);
            // A Jacobian, tangent or Hessian names its wrong entry or output instead of an index.
            assert.match(d.message, /max relative error \d\.\de[-+]\d+ at |(jacobian|tangent|hessian) is wrong: /);
            // A `@backward library-gradient` op has no hand-written function to point at: its gradient is the library's.
            const libraryGradient = doc.getText().includes('@backward library-gradient');
            assert.ok(
              libraryGradient || (d.relatedInformation ?? []).some((r) => /^(backward|jacobian|tangent|hessian) /.test(r.message)),
              'related information names the derivative function',
            );
          }
        }
        const runners = childrenOf(serverPid()!);
        assert.ok(runners.length > 0, 'the checks ran in runner processes under the server');
      });

      it('shows the verdict and figure in code lenses and a table in the hover', async () => {
        const files = await annotatedFiles();
        const buggy = files.find((u) => bugMarkers(opened.get(u.toString())!.getText()) > 0)!;
        const doc = opened.get(buggy.toString())!;
        const titles = await lensTitles(buggy);
        const mismatchLens = titles.find((t) => t.startsWith('✗ mismatch'))!;
        assert.match(mismatchLens, /✗ mismatch · \S+ \d\.\de[-+]\d+ rel · [\d.]+ m?s/);
        assert.ok(titles.includes('report'));
        const diag = probeDiagnostics(buggy, 'gradient-mismatch')[0]!;
        const hovers = (await vscode.commands.executeCommand<vscode.Hover[]>('vscode.executeHoverProvider', buggy, diag.range.start)) ?? [];
        const text = hovers.flatMap((h) => h.contents.map((c) => (typeof c === 'string' ? c : c.value))).join('\n');
        assert.match(text, /\*\*mismatch\*\* · seed \d+/);
        assert.match(text, /\| parameter \| shape \| verdict \| max abs error \| max rel error \| worst at \| backward \| numeric \| method \|/);
        assert.ok(doc.getText().length > 0);
      });

      it('checks the whole workspace from the command and agrees with the demo labels', async () => {
        const result = await vscode.commands.executeCommand<CheckWorkspaceResult>('gradientProbe.checkWorkspace');
        assert.ok(result, 'the command returned a summary');
        let markers = 0;
        let ops = 0;
        for (const uri of await annotatedFiles()) {
          markers += bugMarkers(Buffer.from(await vscode.workspace.fs.readFile(uri)).toString('utf8'));
          ops += (await lensTitles(uri)).filter((t) => VERDICT_LENS.test(t)).length;
        }
        assert.equal(result.cancelled, false);
        assert.equal(result.mismatch, markers, JSON.stringify(result));
        assert.equal(result.pass + result.mismatch + result.inconclusive + result.error, ops, JSON.stringify(result));
        assert.equal(result.error, 0, JSON.stringify(result));
      });

      it('runs an op from the Testing view', async () => {
        const api = await probeApi();
        const files = await annotatedFiles();
        const clean = files.find((u) => bugMarkers(opened.get(u.toString())!.getText()) === 0)!;
        const doc = opened.get(clean.toString())!;
        const op = api.ops(clean.toString())!.ops[0]!;
        const editor = await vscode.window.showTextDocument(doc);
        const at = new vscode.Position(op.range.start.line, op.range.start.character);
        editor.selection = new vscode.Selection(at, at);
        await vscode.commands.executeCommand('testing.runAtCursor');
        const id = `${clean.toString()}#${op.forward}`;
        const outcome = await waitFor(`a Testing view outcome for ${op.forward}`, () => api.testOutcome(id));
        assert.equal(outcome, 'passed');
      });

      it('writes a regression test for a mismatch and opens its report', async () => {
        const files = await annotatedFiles();
        const buggy = files.find((u) => bugMarkers(opened.get(u.toString())!.getText()) > 0)!;
        const api = await probeApi();
        const op = api.ops(buggy.toString())!.ops.find((o) => o.state === 'mismatch')!;
        const snippet = await vscode.commands.executeCommand<string | undefined>('gradientProbe.copyRegressionTest', buggy.toString(), op.forward);
        assert.ok(snippet, 'a snippet came back');
        assert.match(snippet, new RegExp(`^it\\('${op.forward.replace('.', '\\.')}: backward agrees with a central difference`, 'm'));
        assert.equal(await vscode.commands.executeCommand('gradientProbe.openReport', buggy.toString(), op.forward), true);
        await requestScreenshot('report');
      });

      it('shows each derivative kind of the tracker demo as its own lens, and the Hessian bug on its entry', async () => {
        const uri = (await annotatedFiles()).find((u) => u.fsPath.endsWith('tracker.ts'))!;
        assert.ok(uri, 'the demo has src/tracker.ts');
        const titles = await waitFor('verdict lenses for tracker.ts', async () => {
          const t = (await lensTitles(uri)).filter((x) => VERDICT_LENS.test(x));
          return t.length === 4 ? t : undefined;
        });
        assert.deepEqual(
          titles.map((t) => t.split(' · ')[0]),
          ['✓ jacobian pass', '✓ tangent pass', '✓ pass', '✗ hessian mismatch'],
        );
        const diag = probeDiagnostics(uri, 'gradient-mismatch');
        assert.equal(diag.length, 1);
        assert.match(diag[0]!.message, /^aimingCost @hessian: hessian is wrong: H\[1, 0\] \(angles\[1\], angles\[0\]\)/);
      });

      it('leaves no op marked as checking once the work is done', async () => {
        const api = await probeApi();
        await waitFor('every check to finish', () => api.status()?.checking === 0, 30_000);
      });

      after(async () => {
        // Leave the editor as the screenshot should show it: a buggy op with its lenses, and Problems.
        await vscode.commands.executeCommand('workbench.action.closeAllEditors');
        const files = await annotatedFiles();
        const buggy = files.find((u) => bugMarkers(opened.get(u.toString())?.getText() ?? '') > 0);
        if (buggy) {
          const doc = await vscode.workspace.openTextDocument(buggy);
          const mismatch = probeDiagnostics(buggy, 'gradient-mismatch')[0];
          const editor = await vscode.window.showTextDocument(doc);
          // A few lines above the op's name, so its JSDoc, lenses and squiggle are all in view.
          const line = Math.max(0, (mismatch ? mismatch.range.start : positionOf(doc, '@backward')).line - 8);
          editor.revealRange(new vscode.Range(line, 0, line, 0), vscode.TextEditorRevealType.AtTop);
        }
        await vscode.commands.executeCommand('workbench.actions.view.problems');
        await requestScreenshot('problems');
      });
    });
  });
}
