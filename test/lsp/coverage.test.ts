// Coverage in the editor, over LSP with the real server: unreached code of a checked backward
// as hint diagnostics (faded), the hover's coverage line, and the setting that turns the marks off.
// Fixture: test/fixtures/coverage/branches.ts (its line numbers are the expected places).

import assert from 'node:assert/strict';
import { join } from 'node:path';
import type { Hover, MarkupContent } from 'vscode-languageserver-protocol/lib/node/main';
import { FIXTURES, LspSession, lsp } from './lspSession';

const { DiagnosticSeverity, DiagnosticTag, HoverRequest } = lsp;
const WORKSPACE = join(FIXTURES, '..', 'coverage');
const FILE = '../coverage/branches.ts';

describe('language server over LSP (coverage)', function () {
  this.timeout(90_000);

  it('fades the backward code the samples never reached and says in the hover how much ran', async () => {
    const s = new LspSession({ trusted: true, workspace: WORKSPACE });
    try {
      await s.initialize();
      const uri = await s.open(FILE);
      await s.waitFor('spill to pass', () => s.opState(uri, 'spill') === 'pass');
      const hints = await s.waitFor('unreached-code hints', () => {
        const d = s.diagnostics.get(uri)?.filter((x) => x.code === 'unreached-code');
        return d && d.length > 0 ? d : undefined;
      });
      // spillBackward's `if (x[i] > 100)` body is line 20 (0-based 19); the forward's gap is not marked.
      const spill = hints.filter((d) => String(d.message).startsWith('spill:'));
      assert.deepEqual(spill.map((d) => d.range.start.line), [19]);
      assert.equal(spill[0]!.severity, DiagnosticSeverity.Hint);
      assert.deepEqual(spill[0]!.tags, [DiagnosticTag.Unnecessary]);
      assert.match(String(spill[0]!.message), /outside @sample x \[-1, 1\]/);
      const text = s.text(FILE);
      const line = text.split('\n').findIndex((l) => l.startsWith('export function spill('));
      const hover = (await s.connection.sendRequest(HoverRequest.type, { textDocument: { uri }, position: { line, character: 17 } })) as Hover | null;
      assert.ok(hover);
      assert.match((hover.contents as MarkupContent).value, /Backward coverage: 3 of 4 blocks ran during the check \(never reached: line 20\)/);
    } finally {
      await s.close();
    }
  });

  it('marks nothing with gradientProbe.showUnreached off', async () => {
    const s = new LspSession({ trusted: true, workspace: WORKSPACE, settings: { showUnreached: false } });
    try {
      await s.initialize();
      const uri = await s.open(FILE);
      await s.waitFor('spill to pass', () => s.opState(uri, 'spill') === 'pass');
      // Coverage has arrived once the hover reports it; then one more request, so the
      // diagnostics published with that change have been sent before they are read.
      const line = s.text(FILE).split('\n').findIndex((l) => l.startsWith('export function spill('));
      const hoverOf = async (): Promise<string> => {
        const h = (await s.connection.sendRequest(HoverRequest.type, { textDocument: { uri }, position: { line, character: 17 } })) as Hover | null;
        return h ? (h.contents as MarkupContent).value : '';
      };
      for (let i = 0; i < 200 && !/Backward coverage/.test(await hoverOf()); i++) await new Promise((r) => setTimeout(r, 100));
      assert.match(await hoverOf(), /Backward coverage: 3 of 4 blocks ran/);
      assert.deepEqual((s.diagnostics.get(uri) ?? []).filter((x) => x.code === 'unreached-code'), []);
    } finally {
      await s.close();
    }
  });
});
