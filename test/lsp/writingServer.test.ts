// The writing features and the cross-file re-check through the real language server (a child
// process spoken to over LSP), on a copy of test/fixtures/lsp-writing/ so files can be rewritten.

import assert from 'node:assert/strict';
import { cpSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { CodeAction, CompletionItem, CompletionList, Diagnostic, DocumentSymbol, Hover, Location, SymbolInformation } from 'vscode-languageserver-protocol/lib/node/main';
import { FIXTURES, lsp, tempWorkspace, type LspSession, type TempWorkspace } from './lspSession';

const {
  CodeActionRequest,
  CompletionRequest,
  DefinitionRequest,
  DidChangeWatchedFilesNotification,
  DocumentSymbolRequest,
  HoverRequest,
  ReferencesRequest,
  WorkspaceSymbolRequest,
  FileChangeType,
} = lsp;

function positionAfter(text: string, needle: string): { line: number; character: number } {
  const i = text.indexOf(needle);
  assert.ok(i >= 0, `"${needle}" not found`);
  const before = text.slice(0, i + needle.length);
  return { line: before.split('\n').length - 1, character: before.length - before.lastIndexOf('\n') - 1 };
}

describe('writing features over LSP', function () {
  this.timeout(300_000);
  let ws: TempWorkspace;
  let dir: string;
  let s: LspSession;

  before(async () => {
    ws = await tempWorkspace('gp-writing-', (d) => cpSync(join(FIXTURES, '..', 'lsp-writing'), d, { recursive: true }), { timeLimitMs: 5000 });
    ({ dir, s } = ws);
  });
  after(async () => {
    await ws.close();
  });

  it('completes @sample with the unsampled parameters and their guessed specs', async () => {
    const uri = await s.open('vents.ts');
    const text = s.text('vents.ts').replace(' * @sample temp num in [5, 30]\n', ' * @sample temp num in [5, 30]\n * @sample \n');
    await s.replaceText(uri, text);
    const answer = (await s.connection.sendRequest(CompletionRequest.type, {
      textDocument: { uri },
      position: positionAfter(text, ' * @sample temp num in [5, 30]\n * @sample '),
    })) as CompletionItem[] | CompletionList;
    const items = Array.isArray(answer) ? answer : answer.items;
    assert.deepEqual(
      items.map((c) => c.label),
      ['humidity', 'pane'],
    );
    await s.replaceText(uri, s.text('vents.ts'));
  });

  it('offers the quick fix of each annotation problem the server published', async () => {
    const uri = s.uri('vents.ts');
    const diags = await s.waitFor('annotation diagnostics', () => {
      const d = s.diagnostics.get(uri)?.filter((x) => x.code === 'annotation');
      return d && d.length >= 4 ? d : undefined;
    });
    const titles: string[] = [];
    for (const d of diags as Diagnostic[]) {
      const actions = (await s.connection.sendRequest(CodeActionRequest.type, { textDocument: { uri }, range: d.range, context: { diagnostics: [d] } })) as CodeAction[];
      titles.push(...actions.map((a) => a.title));
    }
    assert.ok(titles.includes("Change to '@backward'"), titles.join(' | '));
    assert.ok(titles.includes('Add @sample for humidity, pane'), titles.join(' | '));
    assert.ok(titles.includes("Create function 'condensationBackward'"), titles.join(' | '));
  });

  it('goes to the backward from @backward, and from the backward back to its forward', async () => {
    const uri = s.uri('vents.ts');
    const text = s.text('vents.ts');
    const def = (await s.connection.sendRequest(DefinitionRequest.type, { textDocument: { uri }, position: positionAfter(text, '@backward airflowBack') })) as Location;
    assert.equal(def.uri, uri);
    assert.deepEqual(
      def.range.start,
      positionAfter(text, 'export function airflow(opening: Float64Array): Float64Array {\n  return opening.map((v) => ventScale(v));\n}\n\nexport function '),
    );
    const refs = (await s.connection.sendRequest(ReferencesRequest.type, {
      textDocument: { uri },
      position: def.range.start,
      context: { includeDeclaration: false },
    })) as Location[];
    const forward = positionAfter(text, 'export function ');
    assert.ok(
      refs.some((r) => r.range.start.line === forward.line && r.range.start.character === forward.character),
      JSON.stringify(refs),
    );
  });

  it('follows @construct, and a name imported from another file', async () => {
    const uri = s.uri('vents.ts');
    const text = s.text('vents.ts');
    const def = (await s.connection.sendRequest(DefinitionRequest.type, { textDocument: { uri }, position: positionAfter(text, '@construct make') })) as Location;
    assert.equal(def.range.start.line, positionAfter(text, 'export function makeFan').line);
    const imported = text.replace('@backward airflowBackward', '@backward ventScale');
    await s.replaceText(uri, imported);
    const there = (await s.connection.sendRequest(DefinitionRequest.type, { textDocument: { uri }, position: positionAfter(imported, '@backward ventSc') })) as Location;
    assert.equal(there.uri, s.uri('scale.ts'));
    assert.equal(there.range.start.line, positionAfter(s.text('scale.ts'), 'export function ventScale').line);
    await s.replaceText(uri, text);
  });

  it('lists ops in the outline and the workspace symbol search, and explains tags on hover', async () => {
    const uri = s.uri('vents.ts');
    const symbols = (await s.connection.sendRequest(DocumentSymbolRequest.type, { textDocument: { uri } })) as DocumentSymbol[];
    assert.deepEqual(
      symbols.map((x) => x.name),
      ['airflow → airflowBackward', 'mist → ?', 'condensation → condensationBackward', 'Fan.spin → ?'],
    );
    const found = (await s.connection.sendRequest(WorkspaceSymbolRequest.type, { query: 'cndstn' })) as SymbolInformation[];
    assert.deepEqual(
      found.map((x) => x.name),
      ['condensation'],
    );
    const hover = (await s.connection.sendRequest(HoverRequest.type, { textDocument: { uri }, position: positionAfter(s.text('vents.ts'), ' * @samp') })) as Hover;
    assert.match((hover.contents as { value: string }).value, /\*\*@sample\*\* — How to draw one parameter/);
  });

  it('re-checks an op when a file its bundle includes is saved, and when it changes on disk', async () => {
    const uri = s.uri('vents.ts');
    // The edits of the tests above cancelled the check of the opening; a save checks again.
    await s.save(uri);
    await s.waitFor('airflow to pass', () => s.opState(uri, 'airflow') === 'pass', 90_000);
    const runsBefore = s.logs.join('').split('check vents.ts [').length;
    const firstSeq = s.opStates.get(uri)!.ops.find((o) => o.forward === 'airflow')!.seq!;
    // The helper now scales by 4 while the backward still says 3: the op must turn into a mismatch.
    const scaleUri = await s.open('scale.ts');
    const changed = s.text('scale.ts').replace('VENT_FACTOR = 3', 'VENT_FACTOR = 4');
    writeFileSync(join(dir, 'scale.ts'), changed);
    await s.replaceText(scaleUri, changed);
    await s.save(scaleUri);
    await s.waitFor('airflow to mismatch after scale.ts was saved', () => s.opState(uri, 'airflow') === 'mismatch', 90_000);
    assert.ok(s.diagnostics.get(uri)?.some((d) => d.code === 'gradient-mismatch' && String(d.message).startsWith('airflow:')));
    // Changed back by another program (the file is not open in the editor any more).
    writeFileSync(join(dir, 'scale.ts'), s.text('scale.ts').replace('VENT_FACTOR = 4', 'VENT_FACTOR = 3'));
    await s.connection.sendNotification(lsp.DidCloseTextDocumentNotification.type, { textDocument: { uri: scaleUri } });
    await s.connection.sendNotification(DidChangeWatchedFilesNotification.type, { changes: [{ uri: scaleUri, type: FileChangeType.Changed }] });
    await s.waitFor('airflow to pass again', () => s.opState(uri, 'airflow') === 'pass', 90_000);
    // Each new result carries a higher number and its duration (the Testing view records each once).
    const states = s.opStates.get(uri)!.ops.find((o) => o.forward === 'airflow')!;
    assert.ok(typeof states.seq === 'number' && typeof states.elapsedMs === 'number' && states.elapsedMs > 0, JSON.stringify(states));
    assert.ok(states.seq > firstSeq, `a newer result has a higher number (${states.seq} after ${firstSeq})`);
    // Each change ran vents.ts's check again (a started and a finished line per run). The log
    // lines travel as notifications of their own and may arrive after the op states: wait for them.
    await s.waitFor('two more runs of vents.ts in the log', () => s.logs.join('').split('check vents.ts [').length - runsBefore >= 4, 30_000);
  });
});
