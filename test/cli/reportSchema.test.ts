// The JSON report against its published schema (docs/report.schema.json, JSON Schema draft-07),
// checked by a general-purpose validator from npm (ajv), not by our own reading of the schema:
// the real CLI's `--json` output for the demo (examples/) and for the CLI workspace with every
// kind of result (pass, mismatch, annotation problems, console output, a syntax error).
import assert from 'node:assert/strict';
import { runCli } from '../helpers/cli';
import { schemaViolations } from './helpers/reportShape';

function violations(report: unknown): string {
  return schemaViolations(report).join('\n');
}

describe('the JSON report matches docs/report.schema.json', function () {
  this.timeout(180_000);

  it('for the demo (examples/)', async () => {
    const run = await runCli(['check', 'examples', '--json']);
    assert.equal(run.code, 1, `the demo holds wrong backwards on purpose; stderr: ${run.stderr}`);
    const report = JSON.parse(run.stdout) as { pairs: Array<{ params: unknown[] }> };
    assert.ok(report.pairs.length >= 5, 'the demo has its ops');
    assert.equal(violations(report), '');
  });

  it('for results of every kind, and the schema rejects a report that breaks it', async () => {
    const run = await runCli(['check', 'test/fixtures/cli/basic', '--json']);
    const report = JSON.parse(run.stdout) as { pairs: Array<Record<string, unknown>>; summary: Record<string, unknown> };
    assert.equal(violations(report), '');
    const verdicts = new Set(report.pairs.map((p) => p.verdict));
    for (const v of ['pass', 'mismatch', 'error']) assert.ok(verdicts.has(v), `the workspace gives a ${v}`);
    assert.ok(
      report.pairs.some((p) => Array.isArray(p.problems)),
      'some pair carries problems',
    );
    // Why an op could not be checked is a field, set exactly on the errors.
    for (const p of report.pairs) assert.equal(p.failure !== undefined, p.verdict === 'error', `${String(p.forward)}: ${String(p.failure)}`);
    assert.ok(report.pairs.some((p) => p.failure === 'annotation') && report.pairs.some((p) => p.failure === 'syntax'), JSON.stringify(report.pairs.map((p) => p.failure)));
    // Every checked parameter states the tolerance it was judged with.
    for (const p of report.pairs) for (const q of p.params as Array<{ tolerance?: number }>) assert.equal(typeof q.tolerance, 'number');
    // A validator that accepts anything would pass the lines above: these must fail.
    const wrongVerdict = structuredClone(report);
    wrongVerdict.pairs[0]!.verdict = 'ok';
    assert.notEqual(violations(wrongVerdict), '');
    const noSummary = structuredClone(report) as Partial<typeof report>;
    delete noSummary.summary;
    assert.notEqual(violations(noSummary), '');
    const zeroLine = structuredClone(report);
    zeroLine.pairs[0]!.line = 0;
    assert.notEqual(violations(zeroLine), '');
  });
});
