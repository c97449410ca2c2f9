// The language server's heap trim (lsp/heapTrim.ts): once the old generation has grown by a few
// MiB since the last full collection, the next finished check collects it.
import assert from 'node:assert/strict';
import { getHeapSpaceStatistics } from 'node:v8';
import { HeapTrim } from '../../server/src/lsp/heapTrim';

function oldSpaceUsedMb(): number {
  return (getHeapSpaceStatistics().find((s) => s.space_name === 'old_space')?.space_used_size ?? 0) / 1048576;
}

describe('lsp: heap trim after checks', () => {
  it('collects the old generation once it has grown, and not before', () => {
    const trim = new HeapTrim();
    trim.afterCheck();
    assert.equal(trim.collections, 0, 'nothing has grown yet');
    // About 20 MiB of small objects, kept alive while more allocation moves them to the old generation.
    let held: Array<{ a: number; b: number[] }> | undefined = [];
    for (let i = 0; i < 200_000; i++) held.push({ a: i, b: [i, i + 1, i + 2, i + 3, i + 4, i + 5, i + 6, i + 7] });
    for (let r = 0; r < 20; r++) new Array(200_000).fill(r).map((x: number) => ({ x }));
    const grown = oldSpaceUsedMb();
    assert.equal(held.length, 200_000);
    held = undefined;
    trim.afterCheck();
    assert.equal(trim.collections, 1, `old generation at ${grown.toFixed(1)} MiB before the check`);
    assert.ok(oldSpaceUsedMb() < grown - 4, `old generation ${grown.toFixed(1)} → ${oldSpaceUsedMb().toFixed(1)} MiB`);
  });
});
