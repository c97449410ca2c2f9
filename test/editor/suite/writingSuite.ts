// The writing features inside a real VS Code extension host (code-server), on a trusted copy
// of test/fixtures/lsp-writing/: completion in a forward's JSDoc, each quick fix, go to
// definition, the re-check of an op when a file its bundle includes is saved, and the Testing
// view's record of save-triggered checks. Screenshots: completion and a quick fix menu.

import assert from 'node:assert/strict';
import * as vscode from 'vscode';
import { positionOf, probeApi, probeDiagnostics, requestScreenshot, runMocha, waitFor, workspaceRoot } from './helpers';

function fileUri(name: string): vscode.Uri {
  return vscode.Uri.joinPath(workspaceRoot(), name);
}

/** The end of the first line containing `needle`. */
function endOfLine(doc: vscode.TextDocument, needle: string): vscode.Position {
  return doc.lineAt(positionOf(doc, needle).line).range.end;
}

async function actionsAt(uri: vscode.Uri, range: vscode.Range): Promise<vscode.CodeAction[]> {
  return (await vscode.commands.executeCommand<vscode.CodeAction[]>('vscode.executeCodeActionProvider', uri, range)) ?? [];
}

async function annotationDiagnostic(uri: vscode.Uri, messagePart: string): Promise<vscode.Diagnostic> {
  return waitFor(`an annotation diagnostic mentioning "${messagePart}"`, () => probeDiagnostics(uri, 'annotation').find((d) => d.message.includes(messagePart)), 30_000);
}

export function run(): Promise<void> {
  return runMocha(() => {
    describe('Gradient Probe while writing an op', () => {
      let vents: vscode.TextDocument;
      let editor: vscode.TextEditor;

      afterEach(async function () {
        if (this.currentTest?.state === 'failed') console.log(`extension log (last lines):\n${(await probeApi()).logTail().join('\n')}`);
      });

      before(async () => {
        await probeApi();
        vents = await vscode.workspace.openTextDocument(fileUri('vents.ts'));
        editor = await vscode.window.showTextDocument(vents, { preview: false });
      });

      it('completes @sample with the unsampled parameters and specs from their types', async () => {
        const at = endOfLine(vents, '@sample temp num in [5, 30]');
        await editor.edit((b) => b.insert(at, '\n * @sample '));
        // The new line is the one below `@sample temp` (other ops have `@sample` lines too).
        const cursor = vents.lineAt(positionOf(vents, '@sample temp num in [5, 30]').line + 1).range.end;
        assert.equal(vents.lineAt(cursor.line).text, ' * @sample ');
        const list = await waitFor(
          'completion items for @sample',
          async () => {
            const l = await vscode.commands.executeCommand<vscode.CompletionList>(
              'vscode.executeCompletionItemProvider',
              vents.uri,
              new vscode.Position(cursor.line, cursor.character),
            );
            return l && l.items.some((i) => i.label === 'humidity') ? l : undefined;
          },
          30_000,
        );
        // Ours are the items whose detail is the whole tag; the editor adds words of the file too.
        const ours = list.items.filter((i) => i.detail?.startsWith('@sample ')).map((i) => (typeof i.label === 'string' ? i.label : i.label.label));
        assert.deepEqual(ours.sort(), ['humidity', 'pane'], 'the parameters without a sample, and not temp');
        // Show the suggestion list as a user sees it, for the screenshot.
        editor.selection = new vscode.Selection(cursor, cursor);
        editor.revealRange(new vscode.Range(cursor.line - 6, 0, cursor.line, 0), vscode.TextEditorRevealType.AtTop);
        await vscode.commands.executeCommand('editor.action.triggerSuggest');
        await new Promise((r) => setTimeout(r, 1500));
        await requestScreenshot('completion');
        await vscode.commands.executeCommand('hideSuggestWidget').then(undefined, () => undefined);
        await vscode.commands.executeCommand('undo');
        assert.ok(!vents.getText().includes(' * @sample \n'), 'the typed line is undone');
      });

      it('goes to the backward from the name after @backward', async () => {
        const at = positionOf(vents, '@backward airflowBackward').translate(0, '@backward airf'.length);
        const found = (await vscode.commands.executeCommand<(vscode.Location | vscode.LocationLink)[]>('vscode.executeDefinitionProvider', vents.uri, at)) ?? [];
        const target = positionOf(vents, 'airflowBackward(opening');
        const hit = found.some((l) => {
          const range = 'targetRange' in l ? (l.targetSelectionRange ?? l.targetRange) : l.range;
          const uri = 'targetUri' in l ? l.targetUri : l.uri;
          return uri.toString() === vents.uri.toString() && range.start.isEqual(target);
        });
        assert.ok(hit, JSON.stringify(found));
      });

      it('applies the did-you-mean of a misspelt tag', async () => {
        const d = await annotationDiagnostic(vents.uri, 'unknown tag @bakward');
        const fix = (await actionsAt(vents.uri, d.range)).find((a) => a.title === "Change to '@backward'");
        assert.ok(fix?.edit, 'the quick fix is offered');
        // The quick fix menu as a user sees it, for the screenshot.
        editor.selection = new vscode.Selection(d.range.start, d.range.start);
        editor.revealRange(new vscode.Range(d.range.start.line - 4, 0, d.range.start.line, 0), vscode.TextEditorRevealType.AtTop);
        await vscode.commands.executeCommand('editor.action.quickFix');
        await new Promise((r) => setTimeout(r, 1500));
        await requestScreenshot('quickfix');
        await vscode.commands.executeCommand('hideCodeActionWidget').then(undefined, () => undefined);
        assert.ok(await vscode.workspace.applyEdit(fix.edit));
        await waitFor('the misspelt-tag problem to go', () => !probeDiagnostics(vents.uri, 'annotation').some((x) => x.message.includes('@bakward')), 30_000);
        assert.ok(vents.getText().includes(' * @backward mistBackward\n'));
      });

      it('adds the missing @sample lines with specs from the types', async () => {
        const d = await annotationDiagnostic(vents.uri, "parameter 'humidity' has no @sample");
        const fix = (await actionsAt(vents.uri, d.range)).find((a) => a.title === 'Add @sample for humidity, pane');
        assert.ok(fix?.edit);
        assert.ok(await vscode.workspace.applyEdit(fix.edit));
        await waitFor('the missing-sample problems to go', () => !probeDiagnostics(vents.uri, 'annotation').some((x) => x.message.includes('has no @sample')), 30_000);
        assert.ok(vents.getText().includes(' * @sample humidity num[4, 4]\n * @sample pane num[3]\n'));
      });

      it('creates the missing backward as a stub that discovery resolves', async () => {
        const d = await annotationDiagnostic(vents.uri, "backward 'condensationBackward' not found");
        const fix = (await actionsAt(vents.uri, d.range)).find((a) => a.title === "Create function 'condensationBackward'");
        assert.ok(fix?.edit);
        assert.ok(await vscode.workspace.applyEdit(fix.edit));
        await waitFor('the missing-backward problem to go', () => !probeDiagnostics(vents.uri, 'annotation').some((x) => x.message.includes('condensationBackward')), 30_000);
        assert.match(
          vents.getText(),
          /export function condensationBackward\(temp: number, humidity: number\[\]\[\], pane: \[number, number, number\], dy: number\): \{ temp: number; humidity: number\[\]\[\]; pane: \[number, number, number\] \}/,
        );
      });

      it('annotates an exported function with numeric parameters as an op', async () => {
        const at = positionOf(vents, 'export function shade').translate(0, 'export function sh'.length);
        const fix = (await actionsAt(vents.uri, new vscode.Range(at, at))).find((a) => a.title === "Annotate 'shade' as a gradient op");
        assert.ok(fix?.edit);
        assert.ok(await vscode.workspace.applyEdit(fix.edit));
        const api = await probeApi();
        await waitFor('shade to be listed as an op', () => api.ops(vents.uri.toString())?.ops.some((o) => o.forward === 'shade'), 30_000);
        await vents.save();
      });

      it('re-checks an op when a file its bundle includes is saved, and records it in the Testing view', async () => {
        const api = await probeApi();
        const id = `${vents.uri.toString()}#airflow`;
        await waitFor('airflow to pass', () => api.ops(vents.uri.toString())?.ops.find((o) => o.forward === 'airflow')?.state === 'pass', 60_000);
        await waitFor('the save-triggered check in the Testing view', () => api.testOutcome(id) === 'passed', 30_000);
        const recorded = api.recordedTestRuns();
        assert.ok(recorded > 0, 'a check started by a save is recorded as a test run');
        // The helper now scales by 4 while the backward still says 3.
        const scale = await vscode.workspace.openTextDocument(fileUri('scale.ts'));
        const scaleEditor = await vscode.window.showTextDocument(scale, { preview: false });
        const factor = positionOf(scale, 'VENT_FACTOR = 3').translate(0, 'VENT_FACTOR = '.length);
        await scaleEditor.edit((b) => b.replace(new vscode.Range(factor, factor.translate(0, 1)), '4'));
        assert.ok(await scale.save());
        await waitFor(
          'airflow to become a mismatch after scale.ts was saved',
          () => probeDiagnostics(vents.uri, 'gradient-mismatch').some((d) => d.message.startsWith('airflow:')),
          60_000,
        );
        await waitFor('the Testing view to record the failure', () => api.testOutcome(id) === 'failed', 30_000);
        assert.ok(api.recordedTestRuns() > recorded);
      });
    });
  });
}
