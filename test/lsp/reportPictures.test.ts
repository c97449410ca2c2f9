// The report page's re-check of a passing op for its step picture, over the real server, when
// that re-check ends otherwise than the result it repeats: an op written for it into a
// temporary workspace, whose forward stalls once one check calls it more often than a plain
// check does (the picture's 26 calls). The result the page had must stay everywhere.

import assert from 'node:assert/strict';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { Methods, type CheckOpsResult, type OpReportResult } from '../../server/src/lsp/protocol';
import { tempWorkspace, type LspSession, type TempWorkspace } from './lspSession';

/** Calls of the forward after which it spins: more than a plain check of it makes. */
const STALL_AFTER = 10;

const STALLING_OP = `// A gate setting squared; its forward stalls from call ${STALL_AFTER + 1} of one check on.
let calls = 0;

/**
 * @backward gateSquareBackward
 * @sample x num in [0.2, 0.9]
 */
export function gateSquare(x: number): number {
  calls += 1;
  if (calls > ${STALL_AFTER}) for (;;) calls += 0;
  return x * x;
}

export function gateSquareBackward(x: number, dy: number): number {
  return 2 * x * dy;
}
`;

describe('language server: a report re-check that ends otherwise keeps the result it had', function () {
  this.timeout(60_000);
  let ws: TempWorkspace;
  let s: LspSession;

  before(async () => {
    // A short limit: the stalled re-check is stopped by the runner's watchdog after it.
    ws = await tempWorkspace('gp-pictures-', (dir) => writeFileSync(join(dir, 'stall.ts'), STALLING_OP), { timeLimitMs: 1500 });
    s = ws.s;
  });
  after(async () => {
    await ws.close();
  });

  it('answers the passing result without a picture, shows no error, and does not try again', async () => {
    const uri = await s.open('stall.ts');
    await s.waitFor('gateSquare to pass', () => s.opState(uri, 'gateSquare') === 'pass');
    await s.waitFor('nothing left checking', () => s.lastStatus?.checking === 0);
    // The stored result, reused: a plain check stays below the stall.
    const first = (await s.connection.sendRequest<CheckOpsResult>(Methods.checkOps, { uri, forwards: ['gateSquare'] })).results[0]!;
    assert.equal(first.verdict, 'pass', first.message);
    assert.ok(first.calls.forward <= STALL_AFTER, `a plain check made ${first.calls.forward} forward calls`);
    assert.equal(first.params[0]!.stepScan, undefined);
    const before = s.lastStatus!.opsRun;

    const report = await s.connection.sendRequest<OpReportResult>(Methods.opReport, { uri, forward: 'gateSquare' });
    // The re-check ran (and stalled at the picture's calls) ...
    assert.equal(s.lastStatus!.opsRun, before + 1);
    assert.ok(
      s.logs.some((l) => /gateSquare ended error where its result was pass; that result stays/.test(l)),
      s.logs.filter((l) => l.includes('gateSquare')).join('\n'),
    );
    // ... and the page, the op's state and Problems keep the passing result.
    assert.equal(report.result?.verdict, 'pass', report.reason);
    assert.equal(report.result.params[0]!.stepScan, undefined);
    assert.deepEqual(report.result.calls, first.calls);
    await s.waitFor('gateSquare to show its pass again', () => s.opState(uri, 'gateSquare') === 'pass' && s.lastStatus?.checking === 0);
    assert.deepEqual(s.diagnostics.get(uri) ?? [], []);

    // Asked again: the same answer, no second attempt.
    const again = await s.connection.sendRequest<OpReportResult>(Methods.opReport, { uri, forward: 'gateSquare' });
    assert.deepEqual(again.result?.calls, first.calls);
    await new Promise((r) => setTimeout(r, 300));
    assert.equal(s.lastStatus!.opsRun, before + 1);
  });
});
