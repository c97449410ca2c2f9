// The editor's side of docs/code-shapes.md, "When user code throws": an exception thrown by the op's own code is a diagnostic whose
// related information points at the throwing line of the user's TypeScript (here a helper in
// another file), through the real language server. Fixture: test/fixtures/realcode/thrown.

import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { LspSession, repoRoot } from './lspSession';

describe('language server: where user code threw', function () {
  this.timeout(90_000);
  let s: LspSession;
  const folder = join(repoRoot(), 'test', 'fixtures', 'realcode', 'thrown');

  before(async () => {
    s = new LspSession({ trusted: true, settings: { timeLimitMs: 5000 }, workspace: folder });
    await s.initialize();
  });
  after(async () => {
    await s.close();
  });

  it('a helper that throws: related information "thrown here" at its line in lib/guard.ts', async () => {
    const uri = await s.open('../realcode/thrown/ops.ts');
    const diag = await s.waitFor('lightLog error', () => s.diagnostics.get(uri)?.find((d) => String(d.message).startsWith('lightLog')));
    const thrown = (diag.relatedInformation ?? []).find((r) => r.message === 'thrown here');
    assert.ok(thrown, JSON.stringify(diag));
    assert.equal(thrown.location.uri, pathToFileURL(join(folder, 'lib', 'guard.ts')).toString());
    const guard = readFileSync(join(folder, 'lib', 'guard.ts'), 'utf8');
    assert.equal(thrown.location.range.start.line, guard.slice(0, guard.indexOf('new RangeError')).split('\n').length - 1);
  });
});
