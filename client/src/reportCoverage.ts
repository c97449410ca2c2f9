// The report page's coverage section: how much of the forward and the backward the check ran,
// and each place it never reached, with the sample range that would reach it when the condition
// says so. Pure HTML text, like reportHtml.ts.

import type { CoverageGap, OpResult } from '../../server/src/model/types';

type Escape = (text: string) => string;

/** `line 20` in the op's own file, `helpers.ts:5–7` in another. */
function gapWhere(gap: CoverageGap, opFile: string): string {
  const lines = gap.endLine > gap.startLine ? `${gap.startLine}–${gap.endLine}` : `${gap.startLine}`;
  if (gap.file === opFile) return `${gap.endLine > gap.startLine ? 'lines' : 'line'} ${lines}`;
  const name = gap.file.split(/[\\/]/).pop() ?? gap.file;
  return `${name}:${lines}`;
}

/** The section, or '' when the result carries no coverage. */
export function coverageSection(result: OpResult, esc: Escape): string {
  const c = result.coverage;
  if (!c) return '';
  if (!c.collected) return `<section class="coverage"><h2>Coverage</h2><p class="none">${esc(c.reason)}</p></section>`;
  const share = `backward: ${c.backward.run} of ${c.backward.total} blocks ran · forward: ${c.forward.run} of ${c.forward.total}`;
  if (c.gaps.length === 0) {
    return `<section class="coverage"><h2>Coverage</h2><p class="meta">${esc(share)}. Every block of the forward and the backward ran during the check.</p></section>`;
  }
  const items = c.gaps.map(
    (g) =>
      `<li><span class="where">${esc(gapWhere(g, result.file))}</span> in <code>${esc(g.function)}</code> (${esc(g.side)}): ${esc(g.what)}${g.reach ? `<br><span class="reach">${esc(g.reach)}</span>` : ''}</li>`,
  );
  return `<section class="coverage"><h2>Coverage</h2>
<p class="meta">${esc(share)}. The check says nothing about code it never ran:</p>
<ul class="gaps">${items.join('')}</ul></section>`;
}
