// 1,000 random edits (fast-check, fixed seed) sent to the real language server as didChange
// notifications into a real op file of the hostile workspace, with a save every 5 edits (each
// save starts a check of whatever the text is then, and the next edit cancels it); every 50
// edits the text goes back to the file's own, so runs keep starting between the breakages. The server
// must survive all of it, still answer a hover and code lenses at the end, and keep the number
// of runner processes bounded while runs are started and cancelled.
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { pathToFileURL } from 'node:url';
import fc from 'fast-check';
import type { CodeLens } from 'vscode-languageserver-protocol/lib/node/main';
import { LspSession, lsp } from '../lsp/lspSession';
import { copyHostileWorkspace, coverageRunnerProcesses, runnerProcesses, type HostileCopy } from './workspace';

const { CodeLensRequest, DidChangeTextDocumentNotification, DidOpenTextDocumentNotification, DidSaveTextDocumentNotification, HoverRequest } = lsp;

/** How many edits, and how often the document is saved. */
const EDITS = 1000;
const SAVE_EVERY = 5;
const RESET_EVERY = 50;
/** The pool's runners (min(2, cores)) plus one being replaced while a killed one is reaped. */
const MAX_RUNNERS_DURING = 4;
const MAX_RUNNERS_AFTER = 2;

/** What a half-finished edit inserts: code and annotation fragments, brackets, line breaks. */
const insertion = fc.oneof(
  fc.constantFrom(
    '/**',
    '*/',
    ' * @backward ',
    ' * @sample x f64[3]',
    '@seed 7',
    'function ',
    'export ',
    '{',
    '}',
    '(',
    ')',
    ';',
    '\n',
    '  ',
    'x',
    'return x;',
    'for (;;) {}',
    'throw 1;',
    '`',
    '"',
    '-*/',
    '𝑥',
    '\t',
  ),
  fc.string({ maxLength: 6 }).map((s) => s.replace(/\r/g, '')),
);
const edit = fc.record({ at: fc.nat(), remove: fc.nat({ max: 8 }), insert: insertion });

/** 0-based line and character (UTF-16) of an offset, with LF line breaks. */
function positionAt(text: string, offset: number): { line: number; character: number } {
  const before = text.slice(0, offset);
  const line = before.split('\n').length - 1;
  return { line, character: offset - (before.lastIndexOf('\n') + 1) };
}

describe('language server under 1,000 random edits (fast-check, seed 6601)', function () {
  this.timeout(240_000);
  let ws: HostileCopy;
  let s: LspSession;

  before(async () => {
    ws = copyHostileWorkspace();
    s = new LspSession({ trusted: true, workspace: ws.dir, settings: {} });
    await s.initialize();
  });
  after(async () => {
    await s.close();
    ws.remove();
  });

  it('survives, answers a hover and code lenses at the end, and keeps its runners bounded', async () => {
    const uri = pathToFileURL(ws.file('runaway.ts')).toString();
    let text = ws.text('runaway.ts');
    let version = 1;
    await s.connection.sendNotification(DidOpenTextDocumentNotification.type, { textDocument: { uri, languageId: 'typescript', version, text } });
    let mostRunners = 0;
    // The coverage pass's own pool (same size), counted apart.
    let mostCoverageRunners = 0;
    const edits = fc.sample(edit, { seed: 6601, numRuns: EDITS });
    assert.equal(edits.length, EDITS);
    for (let k = 0; k < edits.length; k++) {
      if (k > 0 && k % RESET_EVERY === 0) {
        text = ws.text('runaway.ts');
        version++;
        await s.connection.sendNotification(DidChangeTextDocumentNotification.type, { textDocument: { uri, version }, contentChanges: [{ text }] });
      }
      const e = edits[k]!;
      const start = e.at % (text.length + 1);
      let end = Math.min(text.length, start + e.remove);
      // Never split a surrogate pair: the server counts UTF-16 units as we do, but a half pair is not text.
      if (end < text.length && /[\udc00-\udfff]/.test(text[end]!)) end++;
      const from = /[\udc00-\udfff]/.test(text[start] ?? '') ? start - 1 : start;
      const range = { start: positionAt(text, from), end: positionAt(text, end) };
      text = text.slice(0, from) + e.insert + text.slice(end);
      version++;
      await s.connection.sendNotification(DidChangeTextDocumentNotification.type, { textDocument: { uri, version }, contentChanges: [{ range, text: e.insert }] });
      if ((k + 1) % SAVE_EVERY === 0) {
        await s.connection.sendNotification(DidSaveTextDocumentNotification.type, { textDocument: { uri } });
        // Let the check start, so the next edit has a run to cancel.
        await new Promise((r) => setTimeout(r, 60));
        mostRunners = Math.max(mostRunners, runnerProcesses(s.serverChildren()).length);
        mostCoverageRunners = Math.max(mostCoverageRunners, coverageRunnerProcesses(s.serverChildren()).length);
      }
    }
    assert.equal(s.child.exitCode, null, 'the server is running');
    const hover = await s.connection.sendRequest(HoverRequest.type, { textDocument: { uri }, position: { line: 0, character: 0 } });
    assert.ok(hover === null || typeof hover === 'object');
    const lenses = (await s.connection.sendRequest(CodeLensRequest.type, { textDocument: { uri } })) as CodeLens[];
    assert.ok(Array.isArray(lenses));
    // Once the last save's run has finished or been cancelled, the pool is back to its size.
    const describeChildren = (): string =>
      s
        .serverChildren()
        .map((pid) => {
          try {
            return `${pid} ${readFileSync(`/proc/${pid}/stat`, 'utf8').split(' ')[2]} ${readFileSync(`/proc/${pid}/cmdline`, 'utf8').replace(/\0/g, ' ').slice(0, 120)}`;
          } catch {
            return `${pid} gone`;
          }
        })
        .join('\n');
    await s
      .waitFor(
        'the runners to settle',
        () => (runnerProcesses(s.serverChildren()).length <= MAX_RUNNERS_AFTER && coverageRunnerProcesses(s.serverChildren()).length <= MAX_RUNNERS_AFTER) || undefined,
        30_000,
      )
      .catch((err: Error) => {
        throw new Error(`${err.message.slice(0, 300)}\nchildren:\n${describeChildren()}`);
      });
    assert.ok(mostRunners <= MAX_RUNNERS_DURING, `at most ${mostRunners} runner processes at a save`);
    assert.ok(mostCoverageRunners <= MAX_RUNNERS_DURING, `at most ${mostCoverageRunners} coverage runner processes at a save`);
    assert.doesNotMatch(s.logs.join(''), /unexpected (error|rejection)/, 'no handler failed');
    // The server still checks: replace the text with the original file and save.
    version++;
    await s.connection.sendNotification(DidChangeTextDocumentNotification.type, { textDocument: { uri, version }, contentChanges: [{ text: ws.text('runaway.ts') }] });
    await s.connection.sendNotification(DidSaveTextDocumentNotification.type, { textDocument: { uri } });
    await s.waitFor('liftGate to pass again', () => s.opState(uri, 'liftGate') === 'pass', 60_000);
    // For the record: how many op checks the saves started (cancelled ones included).
    console.log(`      op checks started during the edits: ${s.lastStatus?.opsRun ?? 'unknown'}; most runner processes at a save: ${mostRunners}`);
  });
});
