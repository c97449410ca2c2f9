// The report page of one op, as a string of HTML with inline SVG: per parameter, the error
// against step size on log–log axes at the worst element (with the tolerance, the error a
// correct backward would show, the detection floor when the engine reports one, and a legend),
// a per-element error map for 2-D parameters, and the figures beside them. Colours come from the editor theme's CSS variables.
// Pure (no editor API) so it can be tested outside the editor.

import type { OpResult, ParamResult, StepScan, WorstElement } from '../../server/src/model/types';
import { formatIndex, formatNumber, formatRelError as sci, formatShape, formatTime, NO_FIGURE } from '../../server/src/present/format';
import { coverageSection } from './reportCoverage';

export interface ReportPageInput {
  result: OpResult;
  /** File name shown in the heading. */
  fileLabel: string;
  /** A fresh random nonce: the only style block allowed by the page's content security policy. */
  nonce: string;
  /** The webview's own source for the policy (`webview.cspSource`). */
  cspSource: string;
  /**
   * The relative tolerance the op was judged with, drawn as a line on each step plot when a
   * parameter does not carry its own (ParamResult.tolerance, the engine's applied one, wins).
   */
  tolerance?: number;
}

/** What a step plot draws besides the recorded errors. */
export interface StepPlotContext {
  tolerance?: number;
  /** The worst element's backward and numeric values (the scan is taken there). */
  worst?: WorstElement | null;
  /** Smallest relative error the check can tell apart from zero here, when the engine reports it. */
  detectionFloor?: number;
  /** Whether the scan is of one element (full or grouped checks), so the reference curve applies. */
  elementwise?: boolean;
}

/** Plot area in CSS pixels. */
const PLOT = { width: 360, height: 220, left: 56, right: 12, top: 12, bottom: 40 } as const;
/** Largest error map drawn, in CSS pixels per side; cells shrink to fit. */
const MAP_SIDE = 320;

export function reportPage(input: ReportPageInput): string {
  const { result, nonce } = input;
  const csp = `default-src 'none'; style-src 'nonce-${nonce}'; img-src ${input.cspSource} data:;`;
  const sections = result.params.map((p) => paramSection(p, p.tolerance ?? input.tolerance)).join('\n');
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
<p class="meta">${esc(input.fileLabel)}:${result.line} · ${result.kind ?? 'backward'} ${esc(result.backward ?? '—')} · seed ${result.seed} · ${formatTime(result.elapsedMs)} · ${result.calls.forward} forward / ${result.calls.backward} backward calls</p>
${result.message ? `<p class="message">${esc(result.message)}</p>` : ''}
${hints}
${sections || '<p>No differentiated parameters.</p>'}
${coverageSection(result, esc)}
<p class="legend">How to read the step plot: for a correct backward the error first falls as the step shrinks (truncation, ∝ h²) and rises again once rounding dominates (∝ 1/h), a V with its floor near the dtype's roundoff (Nocedal &amp; Wright, Numerical Optimization, 2nd ed., §8.1). A wrong backward leaves a flat floor: the numbers disagree at every step. The dashed curve is the finite difference's own error against the refined estimate — what a correct backward would show — and the line marks the tolerance: a pass needs the refined comparison below it.</p>
</body>
</html>`;
}

/** The detection floor of a parameter, when the engine reports a usable one (relative, like the tolerance). */
function detectionFloorOf(p: ParamResult): number | undefined {
  const v = p.detectionFloor;
  return typeof v === 'number' && Number.isFinite(v) && v > 0 ? v : undefined;
}

function paramSection(p: ParamResult, tolerance: number | undefined): string {
  const floor = detectionFloorOf(p);
  const context: StepPlotContext = {
    worst: p.worst,
    elementwise: p.method !== 'dot-product',
    ...(tolerance !== undefined ? { tolerance } : {}),
    ...(floor !== undefined ? { detectionFloor: floor } : {}),
  };
  const plot = p.stepScan && p.stepScan.steps.length > 1 ? stepPlot(p.stepScan, p.name, context) : '<p class="none">No step scan recorded for this parameter.</p>';
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
    ['shape', p.shape.length === 0 ? `${p.dtype} scalar` : formatShape(p)],
    ['method', p.method],
    ['elements checked', `${p.checkedElements} of ${p.elements}`],
    ['max abs error', sci(p.maxAbsError)],
    ['max rel error', sci(p.maxRelError)],
    ['detection floor (p ≥ 0.99)', sci(p.detectionFloor)],
    ['worst element', p.worst ? formatIndex(p.worst.index) : NO_FIGURE],
    ['backward there', formatNumber(p.worst?.analytic)],
    ['numeric there', formatNumber(p.worst?.numeric)],
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

/**
 * The finite difference's own error at each step, |D(h) − n| with n the refined estimate: what a
 * correct backward (equal to n) would show. The scan records e = |a − D(h)|, so D(h) = a ∓ e and
 * |D(h) − n| is either ||a − n| − e| or |a − n| + e; the smaller is drawn. It is exact wherever
 * the step's own error is below the observed discrepancy |a − n| (the V's lower part, which is
 * what the comparison reads), and a lower bound elsewhere.
 */
export function referenceErrors(scan: StepScan, worst: WorstElement): number[] {
  const d = Math.abs(worst.analytic - worst.numeric);
  return scan.absErrors.map((e) => Math.abs(d - e));
}

/** The log–log plot of |backward − central difference| against the step at the worst element. */
export function stepPlot(scan: StepScan, name: string, context: StepPlotContext = {}): string {
  const pts = logPoints(scan);
  const zeros = Math.min(scan.steps.length, scan.absErrors.length) - pts.length;
  if (pts.length < 2) return `<p class="none">The step scan of ${esc(name)} has fewer than two non-zero errors${zeros > 0 ? ` (${zeros} steps matched exactly)` : ''}.</p>`;
  const worst = context.worst ?? undefined;
  const magnitude = worst ? Math.max(Math.abs(worst.analytic), Math.abs(worst.numeric)) : 0;
  // Absolute levels of the relative tolerance and detection floor at the worst element.
  const tolLevel = context.tolerance !== undefined && magnitude > 0 ? context.tolerance * magnitude : undefined;
  const floorLevel = context.detectionFloor !== undefined && magnitude > 0 ? context.detectionFloor * magnitude : undefined;
  // The reference curve only where it differs from the observed one (a mismatch); for a pass they coincide.
  const reference =
    worst && context.elementwise !== false && Math.abs(worst.analytic - worst.numeric) > 0 ? logPoints({ steps: scan.steps, absErrors: referenceErrors(scan, worst) }) : [];
  const showReference = reference.length >= 2 && reference.some((r, i) => pts[i] !== undefined && Math.abs(r.y - pts[i]!.y) > 0.5);
  const levels = [tolLevel, floorLevel].filter((v): v is number => v !== undefined && v > 0).map(Math.log10);
  const xr = decadeRange(pts.map((p) => p.x));
  const yr = decadeRange([...pts.map((p) => p.y), ...(showReference ? reference.map((p) => p.y) : []), ...levels]);
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
    ...ticks(xr.lo, xr.hi).map(
      (d) =>
        `<line class="grid" x1="${f(sx(d))}" y1="${PLOT.top}" x2="${f(sx(d))}" y2="${PLOT.top + h}"/><text class="tick" x="${f(sx(d))}" y="${PLOT.top + h + 14}" text-anchor="middle">1e${d}</text>`,
    ),
    ...ticks(yr.lo, yr.hi).map(
      (d) =>
        `<line class="grid" x1="${PLOT.left}" y1="${f(sy(d))}" x2="${PLOT.left + w}" y2="${f(sy(d))}"/><text class="tick" x="${PLOT.left - 6}" y="${f(sy(d) + 4)}" text-anchor="end">1e${d}</text>`,
    ),
  ].join('');
  const sorted = [...pts].sort((a, b) => a.x - b.x);
  const line = sorted.map((p) => `${f(sx(p.x))},${f(sy(p.y))}`).join(' ');
  const dots = sorted
    .map((p) => `<circle class="dot" cx="${f(sx(p.x))}" cy="${f(sy(p.y))}" r="3"><title>step ${sci(10 ** p.x)}: error ${sci(10 ** p.y)}</title></circle>`)
    .join('');
  const level = (v: number | undefined, cls: string, label: string): string =>
    v === undefined || v <= 0
      ? ''
      : `<line class="${cls}" x1="${PLOT.left}" y1="${f(sy(Math.log10(v)))}" x2="${PLOT.left + w}" y2="${f(sy(Math.log10(v)))}"><title>${esc(label)}: ${sci(v)}</title></line>`;
  const refLine = showReference
    ? `<polyline class="reference" points="${[...reference]
        .sort((a, b) => a.x - b.x)
        .map((p) => `${f(sx(p.x))},${f(sy(p.y))}`)
        .join(' ')}"/>`
    : '';
  const legend = [
    `<li><span class="swatch observed"></span>observed |backward − numeric|</li>`,
    showReference ? `<li><span class="swatch reference"></span>finite-difference error alone (a correct backward)</li>` : '',
    tolLevel !== undefined ? `<li><span class="swatch tolerance"></span>tolerance ${sci(context.tolerance!)} × |value| = ${sci(tolLevel)}</li>` : '',
    floorLevel !== undefined ? `<li><span class="swatch floor"></span>detection floor ${sci(context.detectionFloor!)} × |value| = ${sci(floorLevel)}</li>` : '',
  ].join('');
  return `<figure class="stepplot"><svg class="plot" role="img" aria-label="error against step size for ${esc(name)}" width="${PLOT.width}" height="${PLOT.height}" viewBox="0 0 ${PLOT.width} ${PLOT.height}">
<rect class="frame" x="${PLOT.left}" y="${PLOT.top}" width="${w}" height="${h}"/>${grid}
${level(tolLevel, 'tolerance', 'tolerance')}${level(floorLevel, 'floor', 'detection floor')}${refLine}
<polyline class="curve" points="${line}"/>${dots}
<text class="axis" x="${PLOT.left + w / 2}" y="${PLOT.height - 6}" text-anchor="middle">step h</text>
<text class="axis" transform="translate(12 ${PLOT.top + h / 2}) rotate(-90)" text-anchor="middle">|backward − numeric|</text>
</svg><ul class="plotlegend">${legend}</ul></figure>${zeros > 0 ? `<p class="none">${zeros} step(s) matched exactly and are not drawn on the log axis.</p>` : ''}`;
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
      rects.push(
        `<rect class="cell" x="${c * cell}" y="${r * cell}" width="${cell}" height="${cell}" fill-opacity="${opacity.toFixed(3)}"><title>${esc(name)}[${r}, ${c}]: ${sci(errors[i]!)}</title></rect>`,
      );
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
figure.stepplot { margin: 0; }
.reference { fill: none; stroke: var(--vscode-charts-green, var(--vscode-editor-foreground)); stroke-width: 1.5; stroke-dasharray: 5 3; }
line.tolerance { stroke: var(--vscode-charts-red, var(--vscode-errorForeground)); stroke-width: 1.5; }
line.floor { stroke: var(--vscode-charts-purple, var(--vscode-descriptionForeground)); stroke-width: 1; stroke-dasharray: 2 3; }
.plotlegend { list-style: none; padding: 0; margin: 4px 0 0; font-size: 0.9em; color: var(--vscode-descriptionForeground); }
.swatch { display: inline-block; width: 18px; height: 0; margin-right: 6px; vertical-align: middle; border-top: 2px solid; }
.swatch.observed { border-color: var(--vscode-charts-blue, var(--vscode-editor-foreground)); }
.swatch.reference { border-top-style: dashed; border-color: var(--vscode-charts-green, var(--vscode-editor-foreground)); }
.swatch.tolerance { border-color: var(--vscode-charts-red, var(--vscode-errorForeground)); }
.swatch.floor { border-top-style: dotted; border-color: var(--vscode-charts-purple, var(--vscode-descriptionForeground)); }
.gaps .where { font-family: var(--vscode-editor-font-family); } .gaps .reach { color: var(--vscode-descriptionForeground); }
`;
