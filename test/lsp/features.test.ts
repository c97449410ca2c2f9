// The editor features as pure functions of one document's facts (lsp/documentFacts.ts), without
// a spawned server: where an op stands (one decision, lsp/opStanding.ts) and the words each
// feature shows for it — diagnostics, code lenses, hovers, the Testing view data, the report
// request's reason code — plus the crash notice, which reads the failure kind, not the message.
// The results fed in are report entries as the Checker makes them; the wording is what is pinned.

import assert from 'node:assert/strict';
import { DiagnosticSeverity } from 'vscode-languageserver';
import type { OpResult, ParamResult } from '../../server/src/model/types';
import { codeLensesFor } from '../../server/src/lsp/codeLens';
import { CrashNotice } from '../../server/src/lsp/crashNotice';
import { DiagnosticCodes, diagnosticsFor } from '../../server/src/lsp/diagnostics';
import { snapshotOf, type DocumentFacts } from '../../server/src/lsp/documentFacts';
import { opMarkdown } from '../../server/src/lsp/hover';
import { opStanding, UNTRUSTED_REASON } from '../../server/src/lsp/opStanding';
import { opSummaries } from '../../server/src/lsp/testsView';

const FILE = '/work/lamps/dimmer.ts';
const TEXT = [
  '/**',
  ' * @backward dimBackward',
  ' * @sample level f64[4]',
  ' */',
  'export function dim(level: Float64Array): Float64Array { return level.map((v) => v * v); }',
  'export function dimBackward(level: Float64Array, dy: Float64Array): Float64Array { return level.map((v, i) => v * dy[i]!); }',
  '/**',
  ' * @backwrd glowBackward',
  ' * @sample x num',
  ' */',
  'export function glow(x: number): number { return x; }',
  '',
].join('\n');

function facts(over: Partial<DocumentFacts> = {}, results: Record<string, OpResult> = {}, running: string[] = []): DocumentFacts {
  return {
    snapshot: snapshotOf('file:///work/lamps/dimmer.ts', FILE, TEXT, () => undefined),
    trusted: true,
    isolated: false,
    latest: (forward) => results[forward],
    isRunning: (forward) => running.includes(forward),
    ...over,
  };
}

function level(verdict: ParamResult['verdict'], relError: number): ParamResult {
  return {
    name: 'level',
    verdict,
    maxAbsError: 0.25,
    maxRelError: relError,
    shape: [4],
    dtype: 'f64',
    method: 'full',
    elements: 4,
    checkedElements: 4,
    hints: [],
    worst: { index: [2], analytic: 0.5, numeric: 0.25, relError },
    tolerance: 1e-6,
    detectionFloor: 1e-6,
  };
}

function result(over: Partial<OpResult>): OpResult {
  return {
    verdict: 'pass',
    seed: 1234,
    message: '',
    hints: [],
    params: [],
    calls: { forward: 10, backward: 1 },
    file: FILE,
    line: 5,
    forward: 'dim',
    backward: 'dimBackward',
    elapsedMs: 12.4,
    ...over,
  };
}

const MISMATCH = result({ verdict: 'mismatch', message: "gradient of 'level' disagrees at level[2]", params: [level('mismatch', 0.5)] });
const PASS = result({ params: [level('pass', 3.1e-10)] });

describe('editor features: where an op stands', () => {
  it('is decided once: annotations first, then the project file, then trust', () => {
    const f = facts();
    const [dim, glow] = f.snapshot.ops;
    assert.deepEqual(opStanding(dim!, f), { may: true });
    assert.equal((opStanding(glow!, f) as { code: string }).code, 'annotation-error');
    assert.deepEqual(opStanding(dim!, facts({ configError: { message: 'gradient-probe.json: not valid JSON' } })), {
      may: false,
      code: 'config-error',
      reason: 'gradient-probe.json: not valid JSON',
    });
    assert.deepEqual(opStanding(dim!, facts({ trusted: false })), { may: false, code: 'untrusted', reason: UNTRUSTED_REASON });
    assert.deepEqual(opStanding(dim!, facts({ trusted: false, isolated: true })), { may: true });
  });

  it('is worded alike by the diagnostic, the lens, the hover and the Testing view when untrusted', () => {
    const f = facts({ trusted: false });
    const dim = f.snapshot.ops[0]!;
    const d = diagnosticsFor(f).find((x) => x.code === DiagnosticCodes.untrusted)!;
    assert.equal(d.message, `dim not checked: ${UNTRUSTED_REASON}. Trust the folder to check it.`);
    assert.equal(d.severity, DiagnosticSeverity.Information);
    assert.equal(codeLensesFor(f)[0]!.command!.title, `Gradient Probe: not checked — ${UNTRUSTED_REASON}`);
    assert.match(opMarkdown(dim, f), new RegExp(`Not checked: ${UNTRUSTED_REASON}\\.$`));
    assert.deepEqual(opSummaries(f).ops[0]!.message, `not checked: ${UNTRUSTED_REASON}`);
    // Annotation mistakes are known without running anything: they show even untrusted.
    assert.ok(diagnosticsFor(f).some((x) => x.code === DiagnosticCodes.annotation && /did you mean @backward\?/.test(String(x.message))));
  });
});

describe('editor features: a result in words', () => {
  it('a mismatch: the diagnostic names the worst element with the shared formats', () => {
    const d = diagnosticsFor(facts({}, { dim: MISMATCH })).find((x) => x.code === DiagnosticCodes.mismatch)!;
    assert.equal(d.message, 'dim: gradient of level is wrong: max relative error 5.0e-1 at [2] (backward 0.5, numeric 0.25)');
    assert.equal(d.severity, DiagnosticSeverity.Error);
  });

  it('the lenses: verdict, figure, time; checking while it runs; an offer to check before', () => {
    const titles = (f: DocumentFacts): string[] =>
      codeLensesFor(f)
        .filter((l) => l.range.start.line === 4)
        .map((l) => l.command!.title);
    assert.deepEqual(titles(facts({}, { dim: PASS })), ['✓ pass · worst level 3.1e-10 rel · 12 ms', 'report']);
    assert.deepEqual(titles(facts({}, { dim: MISMATCH })), ['✗ mismatch · level 5.0e-1 rel · 12 ms', 'report']);
    assert.deepEqual(titles(facts({}, { dim: PASS }, ['dim'])), ['Gradient Probe: checking…']);
    assert.deepEqual(titles(facts()), ['Gradient Probe: not checked yet — check now']);
  });

  it('the hover: one table row per parameter in the shared formats', () => {
    const f = facts({}, { dim: MISMATCH });
    const text = opMarkdown(f.snapshot.ops[0]!, f);
    assert.match(text, /— \*\*mismatch\*\* · seed 1234 · 12 ms/);
    assert.ok(text.includes('| level | f64[4] | mismatch | 2.5e-1 | 5.0e-1 | [2] | 0.5 | 0.25 | full |'), text);
  });

  it('the hover: a backward called as its parameter names say shows that call; one called by default does not', () => {
    const text = [
      '/**',
      ' * @backward shadeBackward',
      ' * @sample x num[4]',
      ' */',
      'export function shade(x: number[], eps = 1e-3): number[] { return x.map((v) => v / (1 + eps)); }',
      'export function shadeBackward(x: number[], dy: number[], eps = 1e-3): number[] { return dy.map((g) => g / (1 + eps)); }',
      '',
    ].join('\n');
    const f = facts({ snapshot: snapshotOf('file:///work/lamps/shade.ts', '/work/lamps/shade.ts', text, () => undefined) });
    const op = f.snapshot.ops[0]!;
    assert.deepEqual(op.problems, []);
    assert.match(opMarkdown(op, f), /^\*\*shade\*\* → backward `shadeBackward\(x, \$dy, eps\)` \(called as its parameter names say\)/);
    const plain = facts();
    assert.match(opMarkdown(plain.snapshot.ops[0]!, plain), /^\*\*dim\*\* → backward `dimBackward`\n/);
  });

  it('the Testing view data: the verdict sentence, and the annotation error of a broken op', () => {
    const ops = opSummaries(facts({}, { dim: MISMATCH })).ops;
    assert.deepEqual(
      ops.map((o) => o.state),
      ['mismatch', 'error'],
    );
    assert.match(ops[0]!.message, /^gradient of level is wrong: max relative error 5\.0e-1 at \[2\]/);
    assert.match(ops[1]!.message, /^annotation error: unknown tag @backwrd; did you mean @backward\?/);
  });

  it('a quick fix travels with the diagnostic as data, not as words to parse', () => {
    const d = diagnosticsFor(facts()).find((x) => x.code === DiagnosticCodes.annotation && /@backwrd/.test(String(x.message)))!;
    assert.deepEqual(d.data, { fixes: [{ kind: 'replace', text: '@backward' }] });
  });
});

describe('editor features: the crash notice', () => {
  it('reads the failure kind: one notice per op until it stops crashing; words alone do not count', () => {
    const shown: string[] = [];
    const notice = new CrashNotice((m) => shown.push(m));
    const crashed = result({ verdict: 'error', failure: 'runner-crashed', message: 'the runner process died (signal SIGKILL)' });
    notice.observe(FILE, [crashed]);
    notice.observe(FILE, [crashed]);
    assert.equal(shown.length, 1);
    assert.match(shown[0]!, /checking dim crashed its runner process/);
    // An op whose own message merely reads like a crash (it threw such a text) is not one.
    notice.observe(FILE, [result({ verdict: 'error', failure: 'threw', message: 'the runner process died (as the op itself says)' })]);
    notice.observe(FILE, [result({ verdict: 'error', failure: 'memory-limit', message: 'the op used 900 MiB of memory' })]);
    assert.equal(shown.length, 2);
  });
});
