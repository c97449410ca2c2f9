// The derivative kinds through the language server (the real server in a child process, the
// real LSP client library): each @jacobian, @tangent and @hessian op gets its own state, a
// mismatch is a diagnostic on the forward's name that names the wrong entry or output, and the
// lenses and hover show the kind.

import assert from 'node:assert/strict';
import { join } from 'node:path';
import type { CodeLens, Hover, MarkupContent } from 'vscode-languageserver-protocol/lib/node/main';
import { LspSession, lsp, repoRoot } from './lspSession';

const { CodeLensRequest, HoverRequest } = lsp;
const WORKSPACE = join(repoRoot(), 'test', 'fixtures', 'kinds');

describe('language server over LSP: @jacobian, @tangent and @hessian ops', function () {
  this.timeout(90_000);
  let s: LspSession;
  before(async () => {
    s = new LspSession({ trusted: true, settings: { timeLimitMs: 5000 }, workspace: WORKSPACE });
    await s.initialize();
  });
  after(async () => {
    await s.close();
  });

  it('a passing op of each kind has its own state and lens', async () => {
    const uri = await s.open('../kinds/good.ts');
    for (const name of ['reach @jacobian', 'reach @tangent', 'basin', 'basin @hessian']) {
      await s.waitFor(`${name} to pass`, () => s.opState(uri, name) === 'pass');
    }
    assert.equal(s.diagnostics.get(uri)?.length ?? 0, 0, 'passes publish no diagnostic');
    const lenses = (await s.connection.sendRequest(CodeLensRequest.type, { textDocument: { uri } })) as CodeLens[];
    const titles = lenses.map((l) => l.command?.title ?? '').filter((t) => t !== 'report');
    // Verdict lenses above the forwards; above each derivative function, a lens back to its forward.
    assert.deepEqual(
      titles.filter((t) => !/ of /.test(t)).map((t) => t.split(' · ')[0]),
      ['✓ jacobian pass', '✓ tangent pass', '✓ pass', '✓ hessian pass'],
    );
    assert.deepEqual(
      titles.filter((t) => / of /.test(t)),
      ['jacobian of reach', 'tangent of reach', 'backward of basin', 'hessian of basin'],
    );
  });

  it('a mismatch of each kind is a diagnostic on the forward name naming the entry or output', async () => {
    const uri = await s.open('../kinds/arm.ts');
    const diags = await s.waitFor('three mismatch diagnostics', () => {
      const d = s.diagnostics.get(uri)?.filter((x) => x.code === 'gradient-mismatch');
      return d && d.length === 3 ? d : undefined;
    });
    const messages = diags.map((d) => String(d.message)).sort();
    assert.match(
      messages.find((m) => m.startsWith('bowl @hessian'))!,
      /hessian is wrong: H\[1, 0\] \(v\[1\], v\[0\]\)/,
    );
    assert.match(
      messages.find((m) => m.startsWith('link @jacobian'))!,
      /jacobian is wrong: J\[1, 0\] \(output 1, q\[0\]\)/,
    );
    assert.match(
      messages.find((m) => m.startsWith('link @tangent'))!,
      /tangent is wrong: J·t for a tangent of 'q' disagrees at output 1/,
    );
    for (const d of diags) {
      const related = d.relatedInformation ?? [];
      assert.ok(
        related.some((r) => /^(jacobian|tangent|hessian) \w+: the hand-written derivative/.test(r.message)),
        JSON.stringify(related),
      );
    }
    const hover = (await s.connection.sendRequest(HoverRequest.type, {
      textDocument: { uri },
      position: diags.find((d) => String(d.message).startsWith('bowl'))!.range.start,
    })) as Hover | null;
    assert.ok(hover);
    assert.match((hover.contents as MarkupContent).value, /bowl @hessian\*\* → hessian `bowlHessian`/);
    // Two derivatives of one forward: the hover shows both.
    const linkDiag = diags.find((d) => String(d.message).startsWith('link @jacobian'))!;
    const both = (await s.connection.sendRequest(HoverRequest.type, { textDocument: { uri }, position: linkDiag.range.start })) as Hover | null;
    const text = (both!.contents as MarkupContent).value;
    assert.match(text, /link @jacobian\*\* → jacobian `linkJacobian` — \*\*mismatch\*\*/);
    assert.match(text, /link @tangent\*\* → tangent `linkTangent` — \*\*mismatch\*\*/);
  });
});
