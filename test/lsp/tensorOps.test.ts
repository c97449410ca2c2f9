// The language server on TensorFlow.js ops (test/fixtures/sandbox/tensor/customGrad.ts): a
// tf.customGrad op checked with `@backward library-gradient` shows its verdict as a diagnostic
// on the const's name, and a passing one in a code lens; the hover names the library gradient.
import assert from 'node:assert/strict';
import { dirname } from 'node:path';
import type { CodeLens, Hover, MarkupContent } from 'vscode-languageserver-protocol/lib/node/main';
import { fixture } from '../sandbox/helpers';
import { LspSession, lsp } from './lspSession';

const { CodeLensRequest, HoverRequest } = lsp;

/** The fixture, relative to the LSP fixture folder the session reads files from. */
const FILE = '../sandbox/tensor/customGrad.ts';

function positionOf(text: string, needle: string): { line: number; character: number } {
  const at = text.indexOf(needle);
  assert.ok(at >= 0, `"${needle}" not found`);
  const before = text.slice(0, at);
  return { line: before.split('\n').length - 1, character: at - before.lastIndexOf('\n') - 1 };
}

describe('language server over LSP (TensorFlow.js ops)', function () {
  this.timeout(120_000);
  let s: LspSession;

  before(async () => {
    s = new LspSession({ trusted: true, settings: { timeLimitMs: 60_000 }, workspace: dirname(fixture('tensor', 'customGrad.ts')) });
    await s.initialize();
  });
  after(async () => {
    await s.close();
  });

  it('puts the custom gradient off by a factor on its const, and passes the right one', async () => {
    const uri = await s.open(FILE);
    const text = s.text(FILE);
    await s.waitFor('the customGrad ops to be checked', () => (s.opState(uri, 'softVentLimit') === 'pass' && s.opState(uri, 'doubledVentLimit') === 'mismatch' ? true : undefined));
    const diag = s.diagnostics.get(uri)?.find((d) => d.code === 'gradient-mismatch');
    assert.ok(diag, JSON.stringify(s.diagnostics.get(uri)));
    assert.deepEqual(diag.range.start, positionOf(text, 'doubledVentLimit ='));
    const lenses = (await s.connection.sendRequest(CodeLensRequest.type, { textDocument: { uri } })) as CodeLens[];
    const atPass = lenses.find((l) => l.range.start.line === positionOf(text, 'softVentLimit =').line);
    assert.match(atPass?.command?.title ?? '', /^✓ pass/);
    const hover = (await s.connection.sendRequest(HoverRequest.type, { textDocument: { uri }, position: positionOf(text, 'softVentLimit =') })) as Hover | null;
    assert.ok(hover);
    assert.match((hover.contents as MarkupContent).value, /backward `library-gradient`/);
  });
});
