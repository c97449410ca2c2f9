// Protocol-level tests of the language server: the real server in a child process, spoken to
// with the real LSP client library, on the fixture workspace test/fixtures/lsp/.

import assert from 'node:assert/strict';
import type { CodeLens, Hover, MarkupContent } from 'vscode-languageserver-protocol/lib/node/main';
import type { OpResult } from '../../server/src/model/types';
import {
  Methods,
  type CheckOpsResult,
  type CheckWorkspaceResult,
  type ListWorkspaceOpsResult,
  type OpReportResult,
  type WorkspaceProgressParams,
} from '../../server/src/lsp/protocol';
import { LspSession, lsp } from './lspSession';

const { CodeLensRequest, DiagnosticSeverity, HoverRequest } = lsp;

/**
 * User settings the test "editor" returns. The time limit is short so the hanging fixture
 * ends within the test (the default, 10 s, would only make the suite slower).
 */
const USER_SETTINGS = { timeLimitMs: 2500, tolerance: { f64: 1e-6 } };

/** 0-based position of the `occurrence`-th `needle` in `text`. */
function positionOf(text: string, needle: string, occurrence = 1): { line: number; character: number } {
  let at = -1;
  for (let i = 0; i < occurrence; i++) {
    at = text.indexOf(needle, at + 1);
    assert.ok(at >= 0, `"${needle}" not found`);
  }
  const before = text.slice(0, at);
  return { line: before.split('\n').length - 1, character: at - before.lastIndexOf('\n') - 1 };
}

function hoverText(hover: Hover | null): string {
  assert.ok(hover, 'no hover');
  return (hover.contents as MarkupContent).value;
}

describe('language server over LSP (trusted workspace)', function () {
  this.timeout(90_000);
  let s: LspSession;

  before(async () => {
    s = new LspSession({ trusted: true, settings: USER_SETTINGS });
    await s.initialize();
  });
  after(async () => {
    await s.close();
  });

  it('puts a mismatch on the forward name with its size, worst index and related places', async () => {
    const uri = await s.open('mismatch.ts');
    const text = s.text('mismatch.ts');
    const diags = await s.waitFor('mismatch diagnostic', () => {
      const d = s.diagnostics.get(uri)?.filter((x) => x.code === 'gradient-mismatch');
      return d && d.length > 0 ? d : undefined;
    });
    assert.equal(diags.length, 1);
    const d = diags[0]!;
    const name = positionOf(text, 'growth(');
    assert.deepEqual(d.range.start, name);
    assert.deepEqual(d.range.end, { line: name.line, character: name.character + 'growth'.length });
    assert.equal(d.severity, DiagnosticSeverity.Error);
    assert.equal(d.source, 'gradient-probe');
    assert.match(String(d.message), /gradient of x is wrong: max relative error 5\.0e-1 at \[\d, \d\]/);
    // d/dx e^(2x) = 2e^(2x) (chain rule; d/dx e^x = e^x, Abramowitz & Stegun §4.2, from memory):
    // a backward returning e^(2x) is off by |a - n| / |n| = 1/2 at every element.
    const report = await s.connection.sendRequest<OpReportResult>(Methods.opReport, { uri, forward: 'growth' });
    assert.ok(report.result, report.reason);
    const x = report.result.params.find((p) => p.name === 'x')!;
    assert.ok(Math.abs(x.maxRelError - 0.5) < 1e-6, `max relative error ${x.maxRelError}, expected 0.5`);
    assert.deepEqual(x.shape, [2, 3]);
    const related = d.relatedInformation ?? [];
    assert.deepEqual(related.find((r) => r.message.startsWith('backward'))?.location.range.start, positionOf(text, 'growthBackward(', 1));
    assert.equal(related.find((r) => r.message.startsWith('how x is drawn'))?.location.range.start.line, positionOf(text, '@sample x').line);
  });

  it('shows a passing op in a code lens and a per-parameter hover table', async () => {
    const uri = await s.open('pass.ts');
    const text = s.text('pass.ts');
    await s.waitFor('softplus to pass', () => s.opState(uri, 'softplus') === 'pass');
    assert.equal(s.diagnostics.get(uri)?.length ?? 0, 0, 'a pass publishes no diagnostic');
    const lenses = (await s.connection.sendRequest(CodeLensRequest.type, { textDocument: { uri } })) as CodeLens[];
    const titles = lenses.map((l) => l.command?.title ?? '');
    assert.equal(lenses.length, 3, titles.join(' | '));
    assert.match(titles[0]!, /^✓ pass · worst x \d\.\de-\d+ rel · \d/);
    assert.equal(lenses[0]!.command?.command, 'gradientProbe.server.recheck');
    assert.deepEqual(lenses[0]!.command?.arguments, [uri, 'softplus']);
    assert.equal(lenses[1]!.command?.command, 'gradientProbe.openReport');
    assert.deepEqual(lenses[0]!.range.start, positionOf(text, 'softplus('));
    // Above the backward: the way back to its forward.
    assert.equal(lenses[2]!.command?.title, 'backward of softplus');
    assert.equal(lenses[2]!.command?.command, 'gradientProbe.goToOp');
    assert.deepEqual(lenses[2]!.range.start, positionOf(text, 'softplusBackward('));
    assert.deepEqual(lenses[2]!.command?.arguments, [uri, positionOf(text, 'softplus(').line, positionOf(text, 'softplus(').character]);

    const hover = hoverText(await s.connection.sendRequest(HoverRequest.type, { textDocument: { uri }, position: positionOf(text, 'softplus(') }));
    assert.match(hover, /\*\*softplus\*\* → backward `softplusBackward` — \*\*pass\*\* · seed 1234/);
    assert.match(hover, /\| x \| f64\[8\] \| pass \| /);
    // Every element compared: the detection floor is the float64 tolerance (engine/settings.ts).
    assert.match(hover, /Detection floor \(smallest single-element relative error caught, p ≥ 0\.99\): x 1(\.0+)?e-6/);
    // The @sample tag's hover narrows the table to the parameter it draws.
    const tagHover = hoverText(await s.connection.sendRequest(HoverRequest.type, { textDocument: { uri }, position: positionOf(text, '@sample x') }));
    assert.match(tagHover, /\| x \| f64\[8\] \|/);
    // On the tag's name, the hover also says what the tag does, above the figures.
    assert.match(tagHover, /^\*\*@sample\*\* — How to draw one parameter[\s\S]*---[\s\S]*\| x \| f64\[8\] \|/);
    const report = await s.connection.sendRequest<OpReportResult>(Methods.opReport, { uri, forward: 'softplus' });
    assert.ok(report.result!.params[0]!.maxRelError < USER_SETTINGS.tolerance.f64);
  });

  it("draws a passing op's step picture only when its report opens, with the same verdict and figures", async () => {
    const uri = s.uri('pass.ts');
    await s.waitFor('softplus to pass', () => s.opState(uri, 'softplus') === 'pass');
    // A forced run with the default settings: no picture of a passing parameter.
    const checked = await s.connection.sendRequest<CheckOpsResult>(Methods.checkOps, { uri, forwards: ['softplus'], force: true });
    const first = checked.results[0]!;
    assert.equal(first.verdict, 'pass');
    assert.equal(first.params[0]!.stepScan, undefined);
    assert.equal(first.calls.stepScanForward, undefined);
    await s.waitFor('nothing left checking', () => s.lastStatus!.checking === 0);
    const before = s.lastStatus!.opsRun;
    // The report asks: the op is checked once more, with the picture (stepScans 'all').
    const report = await s.connection.sendRequest<OpReportResult>(Methods.opReport, { uri, forward: 'softplus' });
    const pictured = report.result!;
    const scan = pictured.params[0]!.stepScan;
    assert.ok(scan && scan.steps.length > 1, JSON.stringify(pictured.params[0]));
    await s.waitFor('the re-check to be counted', () => s.lastStatus!.opsRun === before + 1);
    // Same seed, same inputs: the same verdict and figures; only the picture's 26 forward calls differ.
    assert.equal(pictured.verdict, first.verdict);
    assert.equal(pictured.seed, first.seed);
    assert.deepEqual(pictured.inputs, first.inputs);
    const figures = (r: OpResult) => r.params.map((p) => [p.name, p.verdict, p.maxAbsError, p.maxRelError, p.worst, p.detectionFloor, p.tolerance]);
    assert.deepEqual(figures(pictured), figures(first));
    assert.equal(pictured.calls.stepScanForward, 26);
    assert.equal(pictured.calls.forward, first.calls.forward + 26);
    // It is the op's latest now: asking again runs nothing, and a plain check reuses it.
    const again = await s.connection.sendRequest<OpReportResult>(Methods.opReport, { uri, forward: 'softplus' });
    assert.deepEqual(again.result!.params[0]!.stepScan, scan);
    const reused = await s.connection.sendRequest<CheckOpsResult>(Methods.checkOps, { uri, forwards: ['softplus'] });
    assert.deepEqual(reused.results[0]!.params[0]!.stepScan, scan);
    assert.equal(s.lastStatus!.opsRun, before + 1);
    // A mismatch has its picture from the first check: its report runs nothing.
    const growth = await s.connection.sendRequest<OpReportResult>(Methods.opReport, { uri: s.uri('mismatch.ts'), forward: 'growth' });
    assert.ok(growth.result!.params[0]!.stepScan);
    await new Promise((r) => setTimeout(r, 300));
    assert.equal(s.lastStatus!.opsRun, before + 1);
  });

  it('re-checks nothing for the picture once the text changed since the result (the same inputs would no longer be checked)', async () => {
    const uri = s.uri('pass.ts');
    const text = s.text('pass.ts');
    const checked = await s.connection.sendRequest<CheckOpsResult>(Methods.checkOps, { uri, forwards: ['softplus'], force: true });
    assert.equal(checked.results[0]!.params[0]!.stepScan, undefined);
    await s.waitFor('nothing left checking', () => s.lastStatus!.checking === 0);
    const before = s.lastStatus!.opsRun;
    // An unsaved edit (open-and-save: no check of it starts).
    await s.insert(uri, { line: text.split('\n').length - 1, character: 0 }, '// edited\n');
    const report = await s.connection.sendRequest<OpReportResult>(Methods.opReport, { uri, forward: 'softplus' });
    assert.equal(report.result?.verdict, 'pass', report.reason);
    assert.equal(report.result.params[0]!.stepScan, undefined);
    await new Promise((r) => setTimeout(r, 300));
    assert.equal(s.lastStatus!.opsRun, before);
    await s.replaceText(uri, text);
  });

  it('reuses the result when a save changes nothing, and re-checks when forced', async () => {
    const uri = s.uri('pass.ts');
    await s.waitFor('softplus to pass', () => s.opState(uri, 'softplus') === 'pass');
    const before = s.lastStatus!.opsRun;
    const mark = s.stateHistory.length;
    await s.save(uri);
    // A run would push "checking" within milliseconds; give it ample time to show up.
    await new Promise((r) => setTimeout(r, 1500));
    assert.deepEqual(
      s.statesSince(mark, uri, 'softplus').filter((x) => x === 'checking'),
      [],
    );
    assert.equal(s.lastStatus!.opsRun, before);
    // The lens's command (re-check) forces a run of that one op.
    await s.connection.sendRequest('workspace/executeCommand', { command: 'gradientProbe.server.recheck', arguments: [uri, 'softplus'] });
    await s.waitFor('the forced run to be counted', () => s.lastStatus!.opsRun === before + 1);
    await s.waitFor('softplus to pass again', () => s.opState(uri, 'softplus') === 'pass');
    // An op named twice (a Testing view request for a file and its op) runs once and ends.
    const twice = await s.connection.sendRequest<{ results: unknown[] }>(Methods.checkOps, { uri, forwards: ['softplus', 'softplus'], force: true });
    assert.equal(twice.results.length, 1);
    await s.waitFor('the run to be counted once', () => s.lastStatus!.opsRun === before + 2);
    await s.waitFor('nothing left checking', () => s.lastStatus!.checking === 0 && s.opState(uri, 'softplus') === 'pass');
  });

  it('runs nothing under a broken project file and says where it is wrong', async () => {
    const uri = await s.open('broken/cube.ts');
    const diags = await s.waitFor('the configuration diagnostic', () => (s.diagnostics.get(uri)?.length ? s.diagnostics.get(uri) : undefined));
    assert.equal(diags.length, 1);
    assert.equal(diags[0]!.code, 'project-config');
    assert.match(String(diags[0]!.message), /"tolerance\.f64" must be a positive number below 1, got "tight"/);
    assert.match(diags[0]!.relatedInformation?.[0]?.location.uri ?? '', /broken\/gradient-probe\.json$/);
    await s.waitFor('cube to be reported as not run', () => s.opState(uri, 'cube') === 'not-run');
  });

  it('puts an annotation mistake on its tag and runs nothing for that op', async () => {
    const uri = await s.open('annotation.ts');
    const text = s.text('annotation.ts');
    const diags = await s.waitFor('annotation diagnostic', () => (s.diagnostics.get(uri)?.filter((d) => d.code === 'annotation').length ? s.diagnostics.get(uri) : undefined));
    assert.equal(diags.length, 1);
    assert.equal(diags[0]!.range.start.line, positionOf(text, '@sample x f65').line);
    assert.equal(diags[0]!.severity, DiagnosticSeverity.Error);
    assert.match(String(diags[0]!.message), /f65/);
    const lenses = (await s.connection.sendRequest(CodeLensRequest.type, { textDocument: { uri } })) as CodeLens[];
    assert.match(lenses[0]!.command!.title, /annotation error/);
  });

  it('answers a hover while an op hangs, and an edit cancels the stale run', async () => {
    const uri = await s.open('hang.ts');
    const text = s.text('hang.ts');
    await s.waitFor('stuck to be checking', () => s.opState(uri, 'stuck') === 'checking');
    // The hover comes back while the run is still in flight: its text says so.
    const hover = hoverText(await s.connection.sendRequest(HoverRequest.type, { textDocument: { uri }, position: positionOf(text, 'stuck(') }));
    assert.match(hover, /checking…/);
    assert.equal(s.opState(uri, 'stuck'), 'checking', 'the hover was answered before the check ended');
    // An edit (open-and-save mode: no new run) stops the run of the old text.
    await s.insert(uri, { line: text.split('\n').length - 1, character: 0 }, '// edited\n');
    await s.waitFor('the stale run to stop', () => s.opState(uri, 'stuck') === 'unchecked');
    // Had it not been cancelled, a "timed out" error would arrive after the time limit.
    await new Promise((r) => setTimeout(r, USER_SETTINGS.timeLimitMs + 1500));
    assert.equal(s.opState(uri, 'stuck'), 'unchecked');
    assert.equal((s.diagnostics.get(uri) ?? []).length, 0);
  });

  it('lets the project file win over the user setting where both set a tolerance', async () => {
    // Same op as mismatch.ts (relative error 1/2); loose/gradient-probe.json sets tolerance.f64 0.6.
    const uri = await s.open('loose/growth.ts');
    await s
      .waitFor('growth under the loose project file to pass', () => {
        const state = s.opState(uri, 'growth');
        return state === 'pass' || state === 'mismatch' ? state : undefined;
      })
      .then((state) => assert.equal(state, 'pass'));
  });

  it('copies a regression test for a mismatch, and refuses one for a pass', async () => {
    const snippet = await s.connection.sendRequest<{ snippet: string | null; reason?: string }>(Methods.regressionTest, { uri: s.uri('mismatch.ts'), forward: 'growth' });
    assert.ok(snippet.snippet, snippet.reason);
    assert.match(snippet.snippet, /^it\('growth: /m);
    assert.match(snippet.snippet, /seed 1234/);
    const none = await s.connection.sendRequest<{ snippet: string | null; reason?: string }>(Methods.regressionTest, { uri: s.uri('pass.ts'), forward: 'softplus' });
    assert.equal(none.snippet, null);
    assert.match(none.reason ?? '', /not a mismatch/);
  });

  it('lists and checks the whole workspace with progress and a summary', async () => {
    const listed = await s.connection.sendRequest<ListWorkspaceOpsResult>(Methods.listWorkspaceOps, {});
    const names = listed.flatMap((f) => f.ops.map((o) => o.forward)).sort();
    assert.deepEqual(names, ['Gain.apply', 'cube', 'growth', 'growth', 'half', 'softplus', 'stuck']);
    const progress: WorkspaceProgressParams[] = [];
    const sub = s.connection.onNotification(Methods.workspaceProgress, (p: WorkspaceProgressParams) => progress.push(p));
    const summary = await s.connection.sendRequest<CheckWorkspaceResult>(Methods.checkWorkspace, {});
    sub.dispose();
    assert.equal(summary.files, 7);
    assert.equal(summary.cancelled, false);
    // pass.ts and loose/growth.ts pass; mismatch.ts and gain.ts mismatch; annotation.ts and
    // hang.ts (timed out) are errors; broken/cube.ts does not run (its project file is broken).
    assert.deepEqual({ pass: summary.pass, mismatch: summary.mismatch, error: summary.error }, { pass: 2, mismatch: 2, error: 2 });
    assert.equal(progress.at(-1)?.done, 7);
    assert.equal(progress.at(-1)?.total, 7);
    const hang = s.uri('hang.ts');
    await s.waitFor('the timeout diagnostic of hang.ts', () => s.diagnostics.get(hang)?.find((d) => d.code === 'check-failed'));
    assert.match(String(s.diagnostics.get(hang)!.find((d) => d.code === 'check-failed')!.message), /time/);
  });
});

describe('language server over LSP (checking while typing)', function () {
  this.timeout(60_000);
  let s: LspSession;

  before(async () => {
    s = new LspSession({ trusted: true, settings: { ...USER_SETTINGS, checkWhen: 'while-typing', typingPauseMs: 300 } });
    await s.initialize();
  });
  after(async () => {
    await s.close();
  });

  it('checks the unsaved text once typing pauses', async () => {
    const uri = await s.open('mismatch.ts');
    await s.waitFor('growth to mismatch', () => s.opState(uri, 'growth') === 'mismatch');
    const text = s.text('mismatch.ts');
    const before = s.lastStatus!.opsRun;
    // Fix the bug in the buffer only (no save): the typing pause starts a check of this text.
    const line = text.split('\n').findIndex((l) => l.includes('dy[i]! * Math.exp(2 * v)'));
    const character = text.split('\n')[line]!.indexOf('Math.exp');
    await s.insert(uri, { line, character }, '2 * ');
    await s.waitFor('the fixed buffer to pass', () => s.opState(uri, 'growth') === 'pass');
    await s.waitFor('the run to be counted', () => s.lastStatus!.opsRun === before + 1);
  });
});

describe('language server over LSP (untrusted workspace)', function () {
  this.timeout(60_000);
  let s: LspSession;

  before(async () => {
    s = new LspSession({ trusted: false, settings: USER_SETTINGS });
    await s.initialize();
  });
  after(async () => {
    await s.close();
  });

  it('runs no code until trust is granted, and says why', async () => {
    const uri = await s.open('pass.ts');
    const diags = await s.waitFor('the untrusted notice', () => (s.diagnostics.get(uri)?.length ? s.diagnostics.get(uri) : undefined));
    assert.equal(diags.length, 1);
    assert.equal(diags[0]!.code, 'untrusted-workspace');
    assert.equal(diags[0]!.severity, DiagnosticSeverity.Information);
    const lenses = (await s.connection.sendRequest(CodeLensRequest.type, { textDocument: { uri } })) as CodeLens[];
    // One wording of "untrusted" on every surface (lsp/opStanding.ts), and a code beside it for programs.
    assert.match(lenses[0]!.command!.title, /not checked — the workspace is not trusted/);
    const refused = await s.connection.sendRequest<{ results: unknown[]; reason?: string; reasonCode?: string }>(Methods.checkOps, { uri, force: true });
    assert.equal(refused.results.length, 0);
    assert.match(refused.reason ?? '', /not trusted/);
    assert.equal(refused.reasonCode, 'untrusted');
    const summary = await s.connection.sendRequest<CheckWorkspaceResult>(Methods.checkWorkspace, {});
    assert.equal(summary.pass + summary.mismatch + summary.inconclusive, 0);
    assert.match(summary.reason ?? '', /not trusted/);
    // Nothing was executed: the server never started a check or a runner process.
    assert.deepEqual(s.serverChildren(), []);
    assert.equal(s.lastStatus?.opsRun, 0);
    assert.equal(s.opState(uri, 'softplus'), 'not-run');

    await s.connection.sendNotification(Methods.trustChanged, { workspaceTrusted: true });
    await s.waitFor('softplus to pass once trusted', () => s.opState(uri, 'softplus') === 'pass');
    assert.ok(s.runnerChildren().length > 0, 'runner processes start once the workspace is trusted');
  });

  it('once trust is withdrawn, the report answers the result it has and re-checks nothing for the picture', async () => {
    const uri = s.uri('pass.ts');
    await s.waitFor('softplus to pass', () => s.opState(uri, 'softplus') === 'pass' && s.lastStatus!.checking === 0);
    await s.connection.sendNotification(Methods.trustChanged, { workspaceTrusted: false });
    await s.waitFor('the status to say untrusted', () => s.lastStatus?.trusted === false);
    const before = s.lastStatus!.opsRun;
    const report = await s.connection.sendRequest<OpReportResult>(Methods.opReport, { uri, forward: 'softplus' });
    assert.equal(report.result?.verdict, 'pass', report.reason);
    assert.equal(report.result.params[0]!.stepScan, undefined, 'no picture: the re-check it needs may not run');
    await new Promise((r) => setTimeout(r, 300));
    assert.equal(s.lastStatus!.opsRun, before);
  });
});

describe('language server over LSP (untrusted, isolated interpreter opted in)', function () {
  this.timeout(60_000);
  let s: LspSession;

  before(async () => {
    s = new LspSession({ trusted: false, settings: { ...USER_SETTINGS, isolatedWhenUntrusted: true } });
    await s.initialize();
  });
  after(async () => {
    await s.close();
  });

  it('checks in the interpreter, labels it, and starts no runner process', async () => {
    const uri = await s.open('mismatch.ts');
    await s.waitFor('growth to mismatch in the interpreter', () => s.opState(uri, 'growth') === 'mismatch');
    const lenses = (await s.connection.sendRequest(CodeLensRequest.type, { textDocument: { uri } })) as CodeLens[];
    assert.match(lenses[0]!.command!.title, /^✗ mismatch · x 5\.0e-1 rel · .* · isolated interpreter$/);
    const diag = await s.waitFor('the mismatch diagnostic', () => s.diagnostics.get(uri)?.find((d) => d.code === 'gradient-mismatch'));
    assert.match(String(diag.message), /\[isolated interpreter\]$/);
    // The same figures as the runner process: the engine is the same, only the host differs.
    const report = await s.connection.sendRequest<OpReportResult>(Methods.opReport, { uri, forward: 'growth' });
    assert.ok(Math.abs(report.result!.params[0]!.maxRelError - 0.5) < 1e-6);
    // esbuild's service may run (it bundles, running no user code); no sandbox runner may.
    assert.deepEqual(s.runnerChildren(), [], 'no runner process: the interpreter runs in a worker thread');
    await s.waitFor('the status to say isolated', () => s.lastStatus?.isolated === true && s.lastStatus.trusted === false);
  });

  it("re-checks a passing op for its report's picture in the interpreter too, never in a runner process", async () => {
    const uri = await s.open('pass.ts');
    await s.waitFor('softplus to pass in the interpreter', () => s.opState(uri, 'softplus') === 'pass');
    const report = await s.connection.sendRequest<OpReportResult>(Methods.opReport, { uri, forward: 'softplus' });
    assert.equal(report.result?.verdict, 'pass', report.reason);
    assert.equal(report.result.isolation, 'interpreter');
    assert.ok(report.result.params[0]!.stepScan, 'the picture, drawn by the interpreter');
    assert.deepEqual(s.runnerChildren(), []);
  });
});
