// The report page's coverage section, built from real check results (the Checker with coverage
// on the coverage fixture): the share of blocks that ran and every gap, escaped.

import assert from 'node:assert/strict';
import { join } from 'node:path';
import { reportPage } from '../../client/src/reportHtml';
import { Checker } from '../../server/src/core/checker';
import { DEFAULT_SETTINGS } from '../../server/src/engine/settings';
import type { OpResult } from '../../server/src/model/types';
import { FIXTURES } from '../lsp/lspSession';

const BRANCHES = join(FIXTURES, '..', 'coverage', 'branches.ts');

describe('report page: coverage', function () {
  this.timeout(60_000);
  let results: OpResult[];
  before(async () => {
    const checker = new Checker({ settings: DEFAULT_SETTINGS, workers: 1, coverage: true });
    try {
      results = await checker.checkFile(BRANCHES);
    } finally {
      await checker.dispose();
    }
  });

  const page = (forward: string): string => {
    const result = results.find((r) => r.forward === forward)!;
    return reportPage({ result, fileLabel: 'branches.ts', nonce: 'n0nce', cspSource: 'vscode-resource:' });
  };

  it('lists each gap with its lines, function, kind and the range that would reach it', () => {
    const html = page('spill');
    assert.match(html, /backward: 3 of 4 blocks ran · forward: 3 of 4/);
    assert.match(html, /<li><span class="where">line 20<\/span> in <code>spillBackward<\/code> \(backward\): if `x\[i\] &gt; 100`/);
    assert.match(html, /outside @sample x \[-1, 1\]/);
  });

  it('names the file of a gap in a helper elsewhere', () => {
    assert.match(page('heat'), /<span class="where">helpers\.ts:5<\/span> in <code>clampedGain<\/code>/);
  });

  it('says when everything ran', () => {
    assert.match(page('spillWide'), /Every block of the forward and the backward ran during the check/);
  });
});
