// Coverage in the editor, over LSP with the real server: unreached code of a checked backward
// as hint diagnostics (faded), the hover's coverage line, and the setting that turns the marks off.
// Fixture: test/fixtures/coverage/branches.ts (its line numbers are the expected places).

import assert from 'node:assert/strict';
import { join } from 'node:path';
import type { Hover, MarkupContent } from 'vscode-languageserver-protocol/lib/node/main';
import { Methods, type OpReportResult } from '../../server/src/lsp/protocol';
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
      assert.deepEqual(
        spill.map((d) => d.range.start.line),
        [19],
      );
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

  it('runs no coverage and marks nothing with gradientProbe.showUnreached off', async () => {
    const s = new LspSession({ trusted: true, workspace: WORKSPACE, settings: { showUnreached: false } });
    try {
      await s.initialize();
      const uri = await s.open(FILE);
      // The server logs a file's check as done only after every op's runs (coverage included) ended.
      await s.waitFor('the check of branches.ts to end', () => s.logs.some((l) => /check branches\.ts \[.*\]: done/.test(l)));
      const report = await s.connection.sendRequest<OpReportResult>(Methods.opReport, { uri, forward: 'spill' });
      assert.ok(report.result, report.reason);
      assert.equal(report.result.verdict, 'pass');
      assert.equal(report.result.coverage, undefined);
      assert.deepEqual(
        (s.diagnostics.get(uri) ?? []).filter((x) => x.code === 'unreached-code'),
        [],
      );
    } finally {
      await s.close();
    }
  });
});
