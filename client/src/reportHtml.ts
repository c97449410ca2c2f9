// The report page of one op, as a string of HTML with inline SVG: per parameter, the error
// against step size on log–log axes at the worst element, a per-element error map for 2-D
// parameters, and the figures beside them. Colours come from the editor theme's CSS variables.
// Pure (no editor API) so it can be tested outside the editor.

import type { OpResult, ParamResult, StepScan } from '../../server/src/engine/types';
import { coverageSection } from './reportCoverage';

export interface ReportPageInput {
  result: OpResult;
  /** File name shown in the heading. */
  fileLabel: string;
  /** A fresh random nonce: the only style block allowed by the page's content security policy. */
  nonce: string;
  /** The webview's own source for the policy (`webview.cspSource`). */
  cspSource: string;
}

/** Plot area in CSS pixels. */
const PLOT = { width: 360, height: 220, left: 56, right: 12, top: 12, bottom: 40 } as const;
/** Largest error map drawn, in CSS pixels per side; cells shrink to fit. */
const MAP_SIDE = 320;

export function reportPage(input: ReportPageInput): string {
  const { result, nonce } = input;
  const csp = `default-src 'none'; style-src 'nonce-${nonce}'; img-src ${input.cspSource} data:;`;
  const sections = result.params.map((p) => paramSection(p)).join('\n');
  const hints = result.hints.length > 0 ? `<ul class="hints">${result.hints.map((h) => `<li>${esc(h)}</li>`).join('')}</ul>` : '';
  return `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="${csp.replace(/"/g, '&quot;')}">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${esc(result.forward ?? 'op')} — gradient report</title>
<style nonce="${esc(nonce)}">${STYLE}</style>
</head>
<body>
<h1>${esc(result.forward ?? 'op')} <span class="verdict ${esc(result.verdict)}">${esc(result.verdict)}</span></h1>
<p class="meta">${esc(input.fileLabel)}:${result.line} · ${result.kind ?? 'backward'} ${esc(result.backward ?? '—')} · seed ${result.seed} · ${result.elapsedMs.toFixed(1)} ms · ${result.calls.forward} forward / ${result.calls.backward} backward calls</p>
${result.message ? `<p class="message">${esc(result.message)}</p>` : ''}
${hints}
${sections || '<p>No differentiated parameters.</p>'}
${coverageSection(result, esc)}
<p class="legend">How to read the step plot: for a correct backward the error first falls as the step shrinks (truncation, ∝ h²) and rises again once rounding dominates (∝ 1/h), a V with its floor near the dtype's roundoff. A wrong backward leaves a flat floor: the numbers disagree at every step.</p>
</body>
</html>`;
}

function paramSection(p: ParamResult): string {
  const plot = p.stepScan && p.stepScan.steps.length > 1 ? stepPlot(p.stepScan, p.name) : '<p class="none">No step scan recorded for this parameter.</p>';
  const map = p.shape.length === 2 && p.errorMap && p.errorMap.length === p.shape[0]! * p.shape[1]! ? errorMapSvg(p.errorMap, p.shape[0]!, p.shape[1]!, p.name) : '';
  return `<section class="param">
<h2>${esc(p.name)} <span class="verdict ${esc(p.verdict)}">${esc(p.verdict)}</span></h2>
<div class="row">
<div class="plots">${plot}${map}</div>
${figuresTable(p)}
</div>
${p.hints.length > 0 ? `<ul class="hints">${p.hints.map((h) => `<li>${esc(h)}</li>`).join('')}</ul>` : ''}
</section>`;
}

function figuresTable(p: ParamResult): string {
  const rows: [string, string][] = [
    ['shape', p.shape.length === 0 ? `${p.dtype} scalar` : `${p.dtype}[${p.shape.join(', ')}]`],
    ['method', p.method],
    ['elements checked', `${p.checkedElements} of ${p.elements}`],
    ['max abs error', sci(p.maxAbsError)],
    ['max rel error', sci(p.maxRelError)],
    ['detection floor (p ≥ 0.99)', typeof p.detectionFloor === 'number' ? sci(p.detectionFloor) : '—'],
    ['worst element', p.worst ? (p.worst.index.length ? `[${p.worst.index.join(', ')}]` : 'scalar') : '—'],
    ['backward there', p.worst ? String(p.worst.analytic) : '—'],
    ['numeric there', p.worst ? String(p.worst.numeric) : '—'],
  ];
  return `<table class="figures">${rows.map(([k, v]) => `<tr><th>${esc(k)}</th><td>${esc(v)}</td></tr>`).join('')}</table>`;
}

/** Where a positive value lands on a decade axis: log10, with zeros and non-finite values dropped. */
export function logPoints(scan: StepScan): { x: number; y: number }[] {
  const out: { x: number; y: number }[] = [];
  const n = Math.min(scan.steps.length, scan.absErrors.length);
  for (let i = 0; i < n; i++) {
    const h = scan.steps[i]!;
    const e = scan.absErrors[i]!;
    if (h > 0 && Number.isFinite(h) && e > 0 && Number.isFinite(e)) out.push({ x: Math.log10(h), y: Math.log10(e) });
  }
  return out;
}

/** The log–log plot of |backward − central difference| against the step at the worst element. */
export function stepPlot(scan: StepScan, name: string): string {
  const pts = logPoints(scan);
  const zeros = Math.min(scan.steps.length, scan.absErrors.length) - pts.length;
  if (pts.length < 2) return `<p class="none">The step scan of ${esc(name)} has fewer than two non-zero errors${zeros > 0 ? ` (${zeros} steps matched exactly)` : ''}.</p>`;
  const xr = decadeRange(pts.map((p) => p.x));
  const yr = decadeRange(pts.map((p) => p.y));
  const w = PLOT.width - PLOT.left - PLOT.right;
  const h = PLOT.height - PLOT.top - PLOT.bottom;
  const sx = (x: number): number => PLOT.left + ((x - xr.lo) / (xr.hi - xr.lo)) * w;
  const sy = (y: number): number => PLOT.top + (1 - (y - yr.lo) / (yr.hi - yr.lo)) * h;
  const ticks = (lo: number, hi: number): number[] => {
    const every = Math.max(1, Math.ceil((hi - lo) / 6));
    const out: number[] = [];
    for (let d = lo; d <= hi; d += every) out.push(d);
    return out;
  };
  const grid = [
    ...ticks(xr.lo, xr.hi).map((d) => `<line class="grid" x1="${f(sx(d))}" y1="${PLOT.top}" x2="${f(sx(d))}" y2="${PLOT.top + h}"/><text class="tick" x="${f(sx(d))}" y="${PLOT.top + h + 14}" text-anchor="middle">1e${d}</text>`),
    ...ticks(yr.lo, yr.hi).map((d) => `<line class="grid" x1="${PLOT.left}" y1="${f(sy(d))}" x2="${PLOT.left + w}" y2="${f(sy(d))}"/><text class="tick" x="${PLOT.left - 6}" y="${f(sy(d) + 4)}" text-anchor="end">1e${d}</text>`),
  ].join('');
  const sorted = [...pts].sort((a, b) => a.x - b.x);
  const line = sorted.map((p) => `${f(sx(p.x))},${f(sy(p.y))}`).join(' ');
  const dots = sorted.map((p) => `<circle class="dot" cx="${f(sx(p.x))}" cy="${f(sy(p.y))}" r="3"><title>step ${sci(10 ** p.x)}: error ${sci(10 ** p.y)}</title></circle>`).join('');
  return `<svg class="plot" role="img" aria-label="error against step size for ${esc(name)}" width="${PLOT.width}" height="${PLOT.height}" viewBox="0 0 ${PLOT.width} ${PLOT.height}">
<rect class="frame" x="${PLOT.left}" y="${PLOT.top}" width="${w}" height="${h}"/>${grid}
<polyline class="curve" points="${line}"/>${dots}
<text class="axis" x="${PLOT.left + w / 2}" y="${PLOT.height - 6}" text-anchor="middle">step h</text>
<text class="axis" transform="translate(12 ${PLOT.top + h / 2}) rotate(-90)" text-anchor="middle">|backward − numeric|</text>
</svg>${zeros > 0 ? `<p class="none">${zeros} step(s) matched exactly and are not drawn on the log axis.</p>` : ''}`;
}

/** Per-element relative error of a 2-D parameter; darker is worse, on a log scale. */
export function errorMapSvg(errors: number[], rows: number, cols: number, name: string): string {
  const cell = Math.max(2, Math.min(16, Math.floor(MAP_SIDE / Math.max(rows, cols))));
  const logs = errors.map((e) => (e > 0 && Number.isFinite(e) ? Math.log10(e) : Number.NEGATIVE_INFINITY));
  const finite = logs.filter(Number.isFinite);
  const hi = finite.length ? Math.max(...finite) : 0;
  // At least one decade of shading: errors that differ only in roundoff must look the same.
  const lo = finite.length ? Math.min(Math.min(...finite), hi - 1) : 0;
  const rects: string[] = [];
  for (let r = 0; r < rows; r++) {
    for (let c = 0; c < cols; c++) {
      const i = r * cols + c;
      const v = logs[i]!;
      // Opacity from 0.08 (smallest error, still visible) to 1 (largest).
      const opacity = Number.isFinite(v) ? (hi > lo ? 0.08 + (0.92 * (v - lo)) / (hi - lo) : 1) : 0;
      rects.push(`<rect class="cell" x="${c * cell}" y="${r * cell}" width="${cell}" height="${cell}" fill-opacity="${opacity.toFixed(3)}"><title>${esc(name)}[${r}, ${c}]: ${sci(errors[i]!)}</title></rect>`);
    }
  }
  return `<figure class="map"><svg role="img" aria-label="relative error per element of ${esc(name)}" width="${cols * cell}" height="${rows * cell}" viewBox="0 0 ${cols * cell} ${rows * cell}"><rect class="mapframe" x="0" y="0" width="${cols * cell}" height="${rows * cell}"/>${rects.join('')}</svg>
<figcaption>relative error per element (${rows}×${cols}), ${finite.length ? `${sci(10 ** Math.min(...finite))} … ${sci(10 ** hi)}` : 'all zero'}; darker is worse</figcaption></figure>`;
}

function decadeRange(values: number[]): { lo: number; hi: number } {
  const lo = Math.floor(Math.min(...values));
  const hi = Math.ceil(Math.max(...values));
  return hi > lo ? { lo, hi } : { lo: lo - 1, hi: hi + 1 };
}

function f(v: number): string {
  return v.toFixed(1);
}

function sci(v: number): string {
  return Number.isFinite(v) ? (v === 0 ? '0' : v.toExponential(2)) : '—';
}

export function esc(text: string): string {
  return text.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
}

const STYLE = `
body { font-family: var(--vscode-font-family); font-size: var(--vscode-font-size); color: var(--vscode-editor-foreground); background: var(--vscode-editor-background); padding: 0 16px 24px; }
h1 { font-size: 1.4em; } h2 { font-size: 1.15em; margin-top: 1.6em; }
.meta, .legend, .none, figcaption { color: var(--vscode-descriptionForeground); }
.message { white-space: pre-wrap; }
.verdict { font-size: 0.75em; padding: 1px 6px; border-radius: 3px; border: 1px solid var(--vscode-editorWidget-border); vertical-align: middle; }
.verdict.pass { color: var(--vscode-testing-iconPassed); } .verdict.mismatch, .verdict.error { color: var(--vscode-errorForeground); } .verdict.inconclusive { color: var(--vscode-editorWarning-foreground); }
.row { display: flex; flex-wrap: wrap; gap: 24px; align-items: flex-start; }
.plots { display: flex; flex-direction: column; gap: 12px; }
table.figures { border-collapse: collapse; } table.figures th { text-align: left; font-weight: normal; color: var(--vscode-descriptionForeground); padding: 2px 12px 2px 0; } table.figures td { font-family: var(--vscode-editor-font-family); padding: 2px 0; }
svg text { fill: var(--vscode-editor-foreground); font-size: 10px; font-family: var(--vscode-font-family); }
.frame, .mapframe { fill: none; stroke: var(--vscode-editorWidget-border, var(--vscode-editor-foreground)); }
.grid { stroke: var(--vscode-editorLineNumber-foreground); stroke-opacity: 0.35; }
.curve { fill: none; stroke: var(--vscode-charts-blue, var(--vscode-editor-foreground)); stroke-width: 1.5; }
.dot { fill: var(--vscode-charts-blue, var(--vscode-editor-foreground)); }
.cell { fill: var(--vscode-charts-red, var(--vscode-errorForeground)); }
.hints li { color: var(--vscode-editorWarning-foreground); }
.gaps .where { font-family: var(--vscode-editor-font-family); } .gaps .reach { color: var(--vscode-descriptionForeground); }
`;
