// The hostile workspace through the real language server (dist/server.js over stdio, spoken to
// with the LSP client library as test/lsp does): the server stays up through every case, gives
// every op the verdict and message the CLI gives, answers hovers and code lenses while a check
// hangs, replaces a runner that died, and runs no user code while the workspace is untrusted.
import assert from 'node:assert/strict';
import { readdirSync, readFileSync } from 'node:fs';
import { pathToFileURL } from 'node:url';
import type { CodeLens, Hover, MarkupContent } from 'vscode-languageserver-protocol/lib/node/main';
import { Methods, type CheckOpsResult, type CheckWorkspaceResult, type OpReportResult } from '../../server/src/lsp/protocol';
import { LspSession, lsp } from '../lsp/lspSession';
import { expectedLine, HOSTILE_CASES } from './cases';
import { copyHostileWorkspace, coverageRunnerProcesses, runnerProcesses, type HostileCopy } from './workspace';

const { CodeLensRequest, DidChangeTextDocumentNotification, DidOpenTextDocumentNotification, HoverRequest } = lsp;

/** States that end a check (the others: checking, unchecked, not-run). */
const FINAL = new Set(['pass', 'mismatch', 'inconclusive', 'error']);

/** Every .ts file of the copied workspace that the workspace walk includes (not capped/, isolated/). */
function workspaceFiles(ws: HostileCopy): string[] {
  return readdirSync(ws.dir)
    .filter((f) => f.endsWith('.ts'))
    .sort();
}

async function openFile(s: LspSession, ws: HostileCopy, rel: string): Promise<string> {
  const uri = pathToFileURL(ws.file(rel)).toString();
  await s.connection.sendNotification(DidOpenTextDocumentNotification.type, {
    textDocument: { uri, languageId: 'typescript', version: 1, text: ws.text(rel) },
  });
  return uri;
}

/** 0-based position of the forward's name of a case. */
function namePosition(ws: HostileCopy, rel: string, forward: string): { line: number; character: number } {
  const text = ws.text(rel);
  const line = expectedLine({ what: '', file: rel, forward, verdict: 'pass', message: /^/ }, text) - 1;
  const name = forward.includes('.') ? forward.split('.')[1]! : forward;
  return { line, character: text.split('\n')[line]!.indexOf(name) };
}

function hoverText(hover: Hover | null): string {
  assert.ok(hover, 'no hover');
  return (hover.contents as MarkupContent).value;
}

describe('hostile workspace through the language server (trusted)', function () {
  this.timeout(180_000);
  let ws: HostileCopy;
  let s: LspSession;

  before(async () => {
    ws = copyHostileWorkspace();
    s = new LspSession({ trusted: true, workspace: ws.dir, settings: {} });
    await s.initialize();
  });
  after(async () => {
    await s.close();
    ws.remove();
  });

  it('answers a hover and code lenses while a check hangs', async () => {
    const uri = await openFile(s, ws, 'runaway.ts');
    await s.waitFor('openSluiceForever to be checking', () => s.opState(uri, 'openSluiceForever') === 'checking');
    const position = namePosition(ws, 'runaway.ts', 'openSluiceForever');
    const hover = hoverText(await s.connection.sendRequest(HoverRequest.type, { textDocument: { uri }, position }));
    const lenses = (await s.connection.sendRequest(CodeLensRequest.type, { textDocument: { uri } })) as CodeLens[];
    // Both answers came back while the op was still running (its limit is 3,000 ms).
    assert.equal(s.opState(uri, 'openSluiceForever'), 'checking', 'answered before the hang ended');
    assert.match(hover, /openSluiceForever/);
    assert.match(hover, /checking/);
    assert.ok(lenses.length >= 4, `a lens per op: ${lenses.map((l) => l.command?.title).join(' | ')}`);
    await s.waitFor('the hang to time out', () => s.opState(uri, 'openSluiceForever') === 'error');
  });

  it('stays alive through every case and gives each op the verdict and message the CLI gives', async () => {
    const uris = new Map<string, string>();
    for (const rel of workspaceFiles(ws)) uris.set(rel, await openFile(s, ws, rel));
    for (const c of HOSTILE_CASES) {
      const uri = uris.get(c.file)!;
      await s.waitFor(`${c.file} ${c.forward} to finish`, () => FINAL.has(s.opState(uri, c.forward) ?? ''), 90_000);
    }
    const wrong: string[] = [];
    for (const c of HOSTILE_CASES) {
      const uri = uris.get(c.file)!;
      const report = await s.connection.sendRequest<OpReportResult>(Methods.opReport, { uri, forward: c.forward });
      const r = report.result;
      if (!r) wrong.push(`${c.file} ${c.forward}: no result (${report.reason})`);
      else if (r.verdict !== c.verdict || !c.message.test(r.message)) wrong.push(`${c.file} ${c.forward}: ${r.verdict} — ${r.message}`);
    }
    assert.deepEqual(wrong, []);
    assert.equal(s.child.exitCode, null, 'the server is running');
    assert.deepEqual(ws.markers(), [], 'no escape attempt wrote a file');
    // A hover still works at the end, on an op that passed.
    const uri = uris.get('cycleLegalA.ts')!;
    const hover = hoverText(await s.connection.sendRequest(HoverRequest.type, { textDocument: { uri }, position: namePosition(ws, 'cycleLegalA.ts', 'shaftPower') }));
    assert.match(hover, /\*\*pass\*\*/);
    assert.doesNotMatch(s.logs.join(''), /unexpected (error|rejection)/, 'no handler failed');
  });

  it('replaces a runner that died, and the next check passes; the runner count stays bounded', async () => {
    const bombUri = pathToFileURL(ws.file('allocation.ts')).toString();
    const bomb = await s.connection.sendRequest<CheckOpsResult>(Methods.checkOps, { uri: bombUri, forwards: ['recordRipples'], force: true });
    assert.equal(bomb.results[0]?.verdict, 'error', JSON.stringify(bomb));
    assert.match(bomb.results[0]!.message, /memory/);
    const after = await s.connection.sendRequest<CheckOpsResult>(Methods.checkOps, { uri: pathToFileURL(ws.file('runaway.ts')).toString(), forwards: ['liftGate'], force: true });
    assert.equal(after.results[0]?.verdict, 'pass', JSON.stringify(after));
    // The pool holds at most two runners (min(2, cores)); dead ones are gone, not piling up.
    const runners = runnerProcesses(s.serverChildren());
    assert.ok(runners.length >= 1 && runners.length <= 2, `runner processes: ${runners.length}`);
    // The coverage pass has its own pool of the same size, bounded the same way.
    const coverageRunners = coverageRunnerProcesses(s.serverChildren());
    assert.ok(coverageRunners.length <= 2, `coverage runner processes: ${coverageRunners.length}`);
  });
});

describe('hostile workspace through the language server (untrusted)', function () {
  this.timeout(120_000);
  let ws: HostileCopy;
  let s: LspSession;

  before(async () => {
    ws = copyHostileWorkspace();
    s = new LspSession({ trusted: false, workspace: ws.dir, settings: {} });
    await s.initialize();
  });
  after(async () => {
    await s.close();
    ws.remove();
  });

  it('runs no user code: no runner starts, forced and workspace checks are refused, nothing is written', async () => {
    const files = workspaceFiles(ws);
    for (const rel of files) {
      const uri = await openFile(s, ws, rel);
      const refused = await s.connection.sendRequest<CheckOpsResult>(Methods.checkOps, { uri, force: true });
      assert.equal(refused.results.length, 0, `${rel} ran`);
      assert.match(refused.reason ?? '', /not trusted/);
    }
    const summary = await s.connection.sendRequest<CheckWorkspaceResult>(Methods.checkWorkspace, {});
    assert.equal(summary.pass + summary.mismatch + summary.inconclusive, 0);
    assert.match(summary.reason ?? '', /not trusted/);
    // Give any wrongly started run time to show itself: a loading loop would need 3 s to time out.
    await new Promise((r) => setTimeout(r, 500));
    assert.deepEqual(s.serverChildren(), [], 'no runner process was ever started');
    assert.deepEqual(ws.markers(), []);
    const escape = pathToFileURL(ws.file('escape.ts')).toString();
    await s.waitFor('escape.ts ops to be not-run', () => s.opState(escape, 'viaRequire') === 'not-run');
    // Annotation mistakes are still shown: they need no code to run.
    const annotations = pathToFileURL(ws.file('annotations.ts')).toString();
    await s.waitFor('annotation errors', () => s.opState(annotations, 'misspeltTag') === 'error');
  });
});

describe('a runner crash through the language server', function () {
  this.timeout(180_000);
  let ws: HostileCopy;
  let s: LspSession;

  before(async () => {
    ws = copyHostileWorkspace();
    // Checking while typing: every pause re-runs the file, so the crash would repeat per keystroke.
    s = new LspSession({ trusted: true, workspace: ws.dir, settings: { checkWhen: 'while-typing', typingPauseMs: 100 } });
    await s.initialize();
  });
  after(async () => {
    await s.close();
    ws.remove();
  });

  it('is reported once, not once per keystroke, while each run still ends in the error', async () => {
    const uri = await openFile(s, ws, 'allocation.ts');
    const lines = ws.text('allocation.ts').split('\n').length;
    const crashMessages = (): string[] => s.messages.filter((m) => /crashed its runner process/.test(m));
    const ran = (): number => s.lastStatus?.opsRun ?? 0;
    await s.waitFor('the first crash', () => s.opState(uri, 'recordRipples') === 'error');
    for (let edit = 1; edit <= 3; edit++) {
      const before = ran();
      await s.connection.sendNotification(DidChangeTextDocumentNotification.type, {
        textDocument: { uri, version: 1 + edit },
        contentChanges: [{ range: { start: { line: lines - 1 + edit, character: 0 }, end: { line: lines - 1 + edit, character: 0 } }, text: `// keystroke ${edit}\n` }],
      });
      await s.waitFor(`the re-check after keystroke ${edit}`, () => ran() > before && s.opState(uri, 'recordRipples') === 'error', 90_000);
      const report = await s.connection.sendRequest<OpReportResult>(Methods.opReport, { uri, forward: 'recordRipples' });
      assert.match(report.result?.message ?? '', /runner process died|of memory, over the limit/, 'the op crashed its runner again');
    }
    assert.equal(crashMessages().length, 1, crashMessages().join('\n'));
    assert.match(crashMessages()[0]!, /recordRipples/);
    assert.equal(s.opState(uri, 'pondLevel'), 'pass', 'the other op of the file still runs');
  });
});

describe('untrusted workspace with the isolated interpreter opted in', function () {
  this.timeout(180_000);
  let ws: HostileCopy;
  let s: LspSession;

  before(async () => {
    ws = copyHostileWorkspace();
    s = new LspSession({ trusted: false, workspace: ws.dir, settings: { isolatedWhenUntrusted: true } });
    await s.initialize();
  });
  after(async () => {
    await s.close();
    ws.remove();
  });

  it('runs hostile ops only in the interpreter, where escapes fail, loops and bombs stop, and nothing is written', async () => {
    const files = ['escape.ts', 'runaway.ts', 'allocation.ts'];
    const uris = new Map<string, string>();
    for (const rel of files) uris.set(rel, await openFile(s, ws, rel));
    const cases = HOSTILE_CASES.filter((c) => files.includes(c.file));
    for (const c of cases) {
      await s.waitFor(`${c.forward} to finish`, () => FINAL.has(s.opState(uris.get(c.file)!, c.forward) ?? ''), 120_000);
    }
    const results = new Map<string, { verdict: string; message: string; isolation?: string }>();
    for (const c of cases) {
      const report = await s.connection.sendRequest<OpReportResult>(Methods.opReport, { uri: uris.get(c.file)!, forward: c.forward });
      assert.ok(report.result, `${c.forward}: ${report.reason}`);
      results.set(c.forward, report.result);
      assert.equal(report.result.isolation, 'interpreter', `${c.forward} ran in the interpreter`);
    }
    const show = (f: string): string => `${f}: ${results.get(f)?.verdict} — ${results.get(f)?.message}`;
    for (const c of cases.filter((x) => x.file === 'escape.ts')) assert.equal(results.get(c.forward)!.verdict, 'error', show(c.forward));
    assert.match(results.get('openSluiceForever')!.message, /^timed out after 3000 ms/, show('openSluiceForever'));
    assert.match(results.get('recordRipples')!.message, /memory/, show('recordRipples'));
    assert.equal(results.get('liftGate')!.verdict, 'pass', show('liftGate'));
    assert.equal(results.get('pondLevel')!.verdict, 'pass', show('pondLevel'));
    assert.deepEqual(ws.markers(), []);
    // No runner process of the normal pool: user code ran in the interpreter's process only.
    const runners = runnerProcesses(s.serverChildren());
    for (const pid of runners) assert.doesNotMatch(readFileSync(`/proc/${pid}/cmdline`, 'utf8'), /sandbox-child/);
  });
});
