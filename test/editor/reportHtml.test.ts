// The report page built from real check results (the Checker on the LSP fixtures): a strict
// content security policy and no script, a step plot whose points are the recorded errors on
// log–log axes (a V for a correct backward, a flat floor for a wrong one), and the error map.

import assert from 'node:assert/strict';
import { join } from 'node:path';
import { reportPage, stepPlot, errorMapSvg } from '../../client/src/reportHtml';
import { Checker } from '../../server/src/core/checker';
import { DEFAULT_SETTINGS } from '../../server/src/engine/settings';
import type { OpResult, StepScan } from '../../server/src/model/types';
import { FIXTURES } from '../lsp/lspSession';

/** Reads the decade ticks of one axis back from the SVG: pixel position per log10 value. */
function axis(svg: string, which: 'x' | 'y'): (log10: number) => number {
  const ticks = [...svg.matchAll(/<text class="tick" x="([\d.]+)" y="([\d.]+)"[^>]*>1e(-?\d+)<\/text>/g)].map((m) => ({ x: Number(m[1]), y: Number(m[2]), d: Number(m[3]) }));
  const along = which === 'x' ? ticks.filter((t, _i, all) => all.filter((u) => u.y === t.y).length > 1) : ticks.filter((t, _i, all) => all.filter((u) => u.x === t.x).length > 1);
  assert.ok(along.length >= 2, `${which} axis ticks`);
  const [a, b] = [along[0]!, along.at(-1)!];
  const pa = which === 'x' ? a.x : a.y - 4; // y labels sit 4 px below their grid line
  const pb = which === 'x' ? b.x : b.y - 4;
  return (v) => pa + ((v - a.d) / (b.d - a.d)) * (pb - pa);
}

function polyline(svg: string): { x: number; y: number }[] {
  const points = /<polyline class="curve" points="([^"]+)"/.exec(svg)![1]!;
  return points.split(' ').map((p) => {
    const [x, y] = p.split(',').map(Number);
    return { x: x!, y: y! };
  });
}

describe('report page', function () {
  this.timeout(60_000);
  let pass: OpResult;
  /** The same op checked with the default settings: a passing parameter gets no picture. */
  let passPlain: OpResult;
  let mismatch: OpResult;
  before(async () => {
    const checker = new Checker({ settings: DEFAULT_SETTINGS, workers: 1 });
    try {
      // The report page's own request: the language server re-checks with stepScans 'all' (lsp/commands.ts).
      [pass] = (await checker.checkFile(join(FIXTURES, 'pass.ts'), { settings: { ...DEFAULT_SETTINGS, stepScans: 'all' } })) as [OpResult];
      [passPlain] = (await checker.checkFile(join(FIXTURES, 'pass.ts'))) as [OpResult];
      [mismatch] = (await checker.checkFile(join(FIXTURES, 'mismatch.ts'))) as [OpResult];
    } finally {
      await checker.dispose();
    }
    assert.equal(pass.verdict, 'pass');
    assert.equal(passPlain.verdict, 'pass');
    assert.equal(mismatch.verdict, 'mismatch');
  });

  it('says so in place of the plot when a parameter has no step scan', () => {
    assert.equal(passPlain.params[0]!.stepScan, undefined);
    const html = reportPage({ result: passPlain, fileLabel: 'pass.ts', nonce: 'n0nce', cspSource: 'vscode-webview:' });
    assert.match(html, /No step scan recorded for this parameter\./);
    assert.doesNotMatch(html, /<figure class="stepplot">/);
    const pictured = reportPage({ result: pass, fileLabel: 'pass.ts', nonce: 'n0nce', cspSource: 'vscode-webview:' });
    assert.match(pictured, /<figure class="stepplot">/);
    assert.doesNotMatch(pictured, /No step scan recorded/);
  });

  it("has a strict content security policy, no script, and only its nonce'd style", () => {
    const html = reportPage({ result: mismatch, fileLabel: 'mismatch.ts', nonce: 'n0nce', cspSource: 'vscode-webview:' });
    const csp = /<meta http-equiv="Content-Security-Policy" content="([^"]+)">/.exec(html)?.[1] ?? '';
    assert.match(csp, /^default-src 'none'; style-src 'nonce-n0nce';/);
    assert.doesNotMatch(html, /<script/i);
    assert.doesNotMatch(html, /\sstyle="/, 'inline style attributes would be blocked by the policy');
    assert.deepEqual(
      [...html.matchAll(/<style([^>]*)>/g)].map((m) => m[1]),
      [' nonce="n0nce"'],
    );
    assert.match(html, /var\(--vscode-editor-foreground\)/);
  });

  it('states each parameter\'s detection floor beside its figures (README, "What a pass does and does not prove")', () => {
    const html = reportPage({ result: pass, fileLabel: 'pass.ts', nonce: 'n0nce', cspSource: 'vscode-webview:' });
    const floor = pass.params[0]!.detectionFloor;
    assert.equal(typeof floor, 'number');
    assert.match(html, new RegExp(`<th>detection floor \\(p ≥ 0\\.99\\)</th><td>${floor!.toExponential(1).replace('+', '\\+')}`));
  });

  it('plots every recorded step error at its place on log–log axes', () => {
    const scan = pass.params[0]!.stepScan as StepScan;
    const svg = stepPlot(scan, 'x');
    const toX = axis(svg, 'x');
    const toY = axis(svg, 'y');
    const pts = polyline(svg);
    const data = scan.steps
      .map((h, i) => ({ h, e: scan.absErrors[i]! }))
      .filter((p) => p.e > 0)
      .sort((a, b) => a.h - b.h);
    assert.equal(pts.length, data.length);
    data.forEach((p, i) => {
      assert.ok(Math.abs(pts[i]!.x - toX(Math.log10(p.h))) < 0.2, `x of step ${p.h}`);
      assert.ok(Math.abs(pts[i]!.y - toY(Math.log10(p.e))) < 0.2, `y of error ${p.e}`);
    });
  });

  it('shows a V for a correct backward and a flat floor for a wrong one', () => {
    // Nocedal & Wright, 2nd ed., §8.1: the central-difference error falls as h² until
    // roundoff (∝ u/h) takes over, so a correct gradient's error is lowest at a middle step.
    const v = polyline(stepPlot(pass.params[0]!.stepScan!, 'x'));
    const lowest = v.reduce((best, p, i) => (p.y > v[best]!.y ? i : best), 0); // SVG y grows downwards
    assert.ok(lowest > 0 && lowest < v.length - 1, `the lowest error sits inside the scan (index ${lowest} of ${v.length})`);
    // A wrong backward: |analytic − numeric| is the bug itself at every step, a flat line.
    const flat = mismatch.params[0]!.stepScan!;
    const ratio = Math.max(...flat.absErrors) / Math.min(...flat.absErrors);
    assert.ok(ratio < 1.1, `flat floor (max/min ${ratio})`);
  });

  it('draws one error-map cell per element of a 2-D parameter, in row-major order', () => {
    const x = mismatch.params[0]!;
    assert.deepEqual(x.shape, [2, 3]);
    const svg = errorMapSvg(x.errorMap!, 2, 3, 'x');
    const cells = [...svg.matchAll(/<rect class="cell" x="(\d+)" y="(\d+)"[^>]*fill-opacity="([\d.]+)"><title>x\[(\d), (\d)\]: ([^<]+)<\/title>/g)];
    assert.equal(cells.length, 6);
    cells.forEach((c, i) => assert.deepEqual([Number(c[4]), Number(c[5])], [Math.floor(i / 3), i % 3]));
    // Every element is off by the same 1/2: the shading must not exaggerate roundoff differences.
    const opacities = cells.map((c) => Number(c[3]));
    assert.ok(Math.max(...opacities) - Math.min(...opacities) < 0.01, opacities.join(', '));
    assert.ok(reportPage({ result: mismatch, fileLabel: 'm.ts', nonce: 'n', cspSource: 's' }).includes('<figure class="map">'));
  });

  it("escapes text that comes from the user's code", () => {
    const html = reportPage({ result: { ...pass, forward: '<img src=x>', hints: ['a & b'] }, fileLabel: 'f.ts', nonce: 'n', cspSource: 's' });
    assert.doesNotMatch(html, /<img/);
    assert.match(html, /&lt;img src=x&gt;/);
    assert.match(html, /a &amp; b/);
  });
});

describe('report page: tolerance, reference curve, legend and detection floor', function () {
  this.timeout(60_000);
  let mismatch: OpResult;
  before(async () => {
    const checker = new Checker({ settings: DEFAULT_SETTINGS, workers: 1 });
    try {
      [mismatch] = (await checker.checkFile(join(FIXTURES, 'mismatch.ts'))) as [OpResult];
    } finally {
      await checker.dispose();
    }
  });

  it('draws the tolerance as a line at tolerance × |value| of the worst element, with a legend', () => {
    const p = mismatch.params[0]!;
    const svg = stepPlot(p.stepScan!, 'x', { tolerance: 1e-6, worst: p.worst, elementwise: true });
    const toY = axis(svg, 'y');
    const level = 1e-6 * Math.max(Math.abs(p.worst!.analytic), Math.abs(p.worst!.numeric));
    const y = Number(/<line class="tolerance" x1="[\d.]+" y1="([\d.]+)"/.exec(svg)![1]);
    assert.ok(Math.abs(y - toY(Math.log10(level))) < 0.2, `tolerance line at ${y}, expected ${toY(Math.log10(level))}`);
    assert.match(svg, /<ul class="plotlegend"><li><span class="swatch observed"><\/span>observed/);
    assert.match(svg, /tolerance 1\.0e-6 × \|value\|/);
  });

  it("beside a wrong backward's flat floor, draws the V a correct one would show", () => {
    // Nocedal & Wright, 2nd ed., §8.1: the central difference's own error is lowest at a middle
    // step (truncation ∝ h² against roundoff ∝ u/h); the observed error of a wrong backward is flat.
    const p = mismatch.params[0]!;
    const svg = stepPlot(p.stepScan!, 'x', { worst: p.worst, elementwise: true });
    const ref = /<polyline class="reference" points="([^"]+)"/.exec(svg);
    assert.ok(ref, 'reference curve drawn');
    const ys = ref[1]!.split(' ').map((pt) => Number(pt.split(',')[1]));
    const lowest = ys.reduce((best, y, i) => (y > ys[best]! ? i : best), 0);
    assert.ok(lowest > 0 && lowest < ys.length - 1, `the reference V has its lowest error inside the scan (index ${lowest} of ${ys.length})`);
    // Its bottom lies far below the observed floor (here the bug is an error of 1/2 relative).
    const observed = polyline(svg).map((pt) => pt.y);
    assert.ok(Math.max(...ys) - Math.max(...observed) > 50, 'the V dips well below the flat floor');
  });

  it('shows the detection floor when the engine reports one, and nothing about it otherwise', () => {
    const p = { ...mismatch.params[0]!, detectionFloor: 3e-9 };
    const html = reportPage({ result: { ...mismatch, params: [p] }, fileLabel: 'm.ts', nonce: 'n', cspSource: 's', tolerance: 1e-6 });
    assert.match(html, /<line class="floor"/);
    assert.match(html, /detection floor 3\.0e-9 × \|value\|/);
    const noFloor = mismatch.params.map((q) => {
      const copy = { ...q };
      delete copy.detectionFloor;
      return copy;
    });
    const without = reportPage({ result: { ...mismatch, params: noFloor }, fileLabel: 'm.ts', nonce: 'n', cspSource: 's', tolerance: 1e-6 });
    assert.doesNotMatch(without, /class="floor"|swatch floor/);
  });
});
