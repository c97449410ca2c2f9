// The Testing view: every annotated op is a test item, grouped by file; running an item
// checks that op through the server and reports pass or failure with the verdict's message.
// Checks started elsewhere (a save, a lens, a command) are recorded as test runs too, from the
// op states the server pushes: each new result once, with its message and duration.

import * as vscode from 'vscode';
import type { OpResult } from '../../server/src/model/types';
import { elementName, formatNumber, formatTime, worstParam } from '../../server/src/present/format';
import { Methods, type CheckOpsParams, type CheckOpsResult, type FileOps, type ListWorkspaceOpsResult, type OpSummary } from '../../server/src/lsp/protocol';
import type { ProbeContext } from './context';

export class ProbeTests implements vscode.Disposable {
  readonly controller = vscode.tests.createTestController('gradientProbe', 'Gradient Probe');
  /** The outcome of each item's latest run (by test item id), for the in-editor tests. */
  readonly outcomes = new Map<string, 'passed' | 'failed' | 'errored' | 'skipped'>();
  /** Runs recorded from pushed results (not started in the Testing view), for the in-editor tests. */
  recordedRuns = 0;
  private readonly disposables: vscode.Disposable[] = [this.controller];
  /** The number of the last result recorded per item, so a re-pushed result is not recorded again. */
  private readonly recordedSeq = new Map<string, number>();
  /** Items a Testing-view run is checking now: that run reports them itself. */
  private readonly inViewRun = new Set<string>();

  constructor(private readonly ctx: ProbeContext) {
    this.controller.resolveHandler = async (item) => {
      if (!item) await this.loadWorkspace();
    };
    this.controller.refreshHandler = () => this.loadWorkspace();
    this.disposables.push(this.controller.createRunProfile('Check gradients', vscode.TestRunProfileKind.Run, (request, token) => this.run(request, token), true));
  }

  /** Asks the server for every op of the workspace (discovery only, nothing runs). */
  async loadWorkspace(): Promise<void> {
    const client = this.ctx.running;
    if (!client) return;
    const files = await client.sendRequest<ListWorkspaceOpsResult>(Methods.listWorkspaceOps, {});
    for (const file of files) this.updateFile(file);
  }

  /** Adds, moves or removes the items of one file from the server's op states. */
  updateFile(file: FileOps): void {
    const uri = vscode.Uri.parse(file.uri);
    let fileItem = this.controller.items.get(file.uri);
    if (file.ops.length === 0) {
      if (fileItem) this.controller.items.delete(file.uri);
      return;
    }
    if (!fileItem) {
      fileItem = this.controller.createTestItem(file.uri, vscode.workspace.asRelativePath(uri), uri);
      this.controller.items.add(fileItem);
    }
    const children: vscode.TestItem[] = [];
    const fresh: { item: vscode.TestItem; op: OpSummary }[] = [];
    for (const op of file.ops) {
      const id = `${file.uri}#${op.forward}`;
      const item = fileItem.children.get(id) ?? this.controller.createTestItem(id, op.forward, uri);
      item.range = new vscode.Range(op.range.start.line, op.range.start.character, op.range.end.line, op.range.end.character);
      item.description = op.state;
      children.push(item);
      if (op.seq !== undefined && op.seq !== this.recordedSeq.get(id)) {
        this.recordedSeq.set(id, op.seq);
        if (!this.inViewRun.has(id)) fresh.push({ item, op });
      }
    }
    fileItem.children.replace(children);
    if (fresh.length > 0) this.recordPushed(fresh);
  }

  /** Records results of checks started outside the Testing view as one finished test run. */
  private recordPushed(fresh: { item: vscode.TestItem; op: OpSummary }[]): void {
    const run = this.controller.createTestRun(new vscode.TestRunRequest(fresh.map((f) => f.item)), 'Gradient Probe (on save or command)', true);
    for (const { item, op } of fresh) {
      run.started(item);
      const duration = op.elapsedMs;
      const message = new vscode.TestMessage(`${op.state}: ${op.message}`);
      if (item.uri && item.range) message.location = new vscode.Location(item.uri, item.range);
      run.appendOutput(`${item.label}: ${op.state} — ${op.message}\r\n`, undefined, item);
      if (op.state === 'pass') {
        run.passed(item, duration);
        this.outcomes.set(item.id, 'passed');
      } else if (op.state === 'mismatch') {
        run.failed(item, message, duration);
        this.outcomes.set(item.id, 'failed');
      } else if (op.state === 'error') {
        run.errored(item, message, duration);
        this.outcomes.set(item.id, 'errored');
      } else {
        run.skipped(item);
        this.outcomes.set(item.id, 'skipped');
      }
    }
    run.end();
    this.recordedRuns++;
  }

  /** Runs the requested items: whole files or single ops, one server request per file. */
  private async run(request: vscode.TestRunRequest, token: vscode.CancellationToken): Promise<void> {
    const run = this.controller.createTestRun(request, 'Gradient Probe', true);
    try {
      const client = this.ctx.running;
      const byFile = new Map<string, { fileItem: vscode.TestItem; ops: vscode.TestItem[] | undefined }>();
      const roots = request.include ?? [...gather(this.controller.items)];
      for (const item of roots) {
        const fileItem = item.parent ?? item;
        const entry = byFile.get(fileItem.id) ?? { fileItem, ops: [] };
        if (item.parent) entry.ops?.push(item);
        else entry.ops = undefined; // the whole file
        byFile.set(fileItem.id, entry);
      }
      for (const { fileItem, ops } of byFile.values()) {
        if (token.isCancellationRequested) break;
        const items = ops ?? [...gather(fileItem.children)];
        const excluded = new Set(request.exclude?.map((i) => i.id) ?? []);
        const wanted = [...new Map(items.filter((i) => !excluded.has(i.id)).map((i) => [i.id, i] as const)).values()];
        if (!client) {
          for (const item of wanted) {
            run.errored(item, new vscode.TestMessage('The Gradient Probe language server is not running.'));
            this.outcomes.set(item.id, 'errored');
          }
          continue;
        }
        for (const item of wanted) {
          run.started(item);
          this.inViewRun.add(item.id);
        }
        const params: CheckOpsParams = { uri: fileItem.id, forwards: wanted.map((i) => i.label), force: true };
        let answer: CheckOpsResult;
        try {
          answer = await client.sendRequest<CheckOpsResult>(Methods.checkOps, params, token);
        } finally {
          // The server pushes the op states before it answers, so these are already seen.
          for (const item of wanted) this.inViewRun.delete(item.id);
        }
        const byName = new Map<string, OpResult>(answer.results.map((r) => [r.forward ?? '', r]));
        for (const item of wanted) {
          const result = byName.get(item.label);
          if (!result) {
            run.skipped(item);
            this.outcomes.set(item.id, 'skipped');
            if (answer.reason) run.appendOutput(`${item.label}: ${answer.reason}\r\n`);
            continue;
          }
          this.outcomes.set(item.id, report(run, item, result));
        }
      }
    } catch (err) {
      run.appendOutput(`Gradient Probe: ${err instanceof Error ? err.message : String(err)}\r\n`);
    } finally {
      run.end();
    }
  }

  dispose(): void {
    for (const d of this.disposables) d.dispose();
  }
}

function report(run: vscode.TestRun, item: vscode.TestItem, result: OpResult): 'passed' | 'failed' | 'errored' | 'skipped' {
  const duration = result.elapsedMs;
  if (result.output) run.appendOutput(result.output.replace(/\r?\n/g, '\r\n'), undefined, item);
  // Every result leaves a line in the run's output, a pass too (its figure and time).
  run.appendOutput(`${item.label}: ${result.verdict} — ${result.message || 'gradient agrees'} (${formatTime(result.elapsedMs)})\r\n`, undefined, item);
  if (result.verdict === 'pass') {
    run.passed(item, duration);
    return 'passed';
  }
  if (result.verdict === 'inconclusive') {
    // Neither right nor wrong: the numeric estimate could not be trusted at the sample.
    run.skipped(item);
    return 'skipped';
  }
  const message = new vscode.TestMessage(`${result.verdict}: ${result.message}`);
  // The parameter the verdict rests on: the one rule of every surface (present/format.ts).
  const worst = worstParam(result);
  if (result.verdict === 'mismatch' && worst?.worst) {
    const where = elementName(worst.name, worst.worst.index);
    message.expectedOutput = `numeric ${formatNumber(worst.worst.numeric)} at ${where}`;
    message.actualOutput = `backward ${formatNumber(worst.worst.analytic)} at ${where}`;
  }
  if (item.uri && item.range) message.location = new vscode.Location(item.uri, item.range);
  if (result.verdict === 'error') {
    run.errored(item, message, duration);
    return 'errored';
  }
  run.failed(item, message, duration);
  return 'failed';
}

function* gather(collection: vscode.TestItemCollection): Generator<vscode.TestItem> {
  for (const [, item] of collection) yield item;
}
