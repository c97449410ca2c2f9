// Code written the way people write it (docs/code-shapes.md), through the real command line: exceptions
// thrown by the op's own code point at the user's TypeScript file, line and column in the
// human output ("thrown at FILE:LINE:COLUMN"), the JSON report (`thrownAt`, with the inputs
// that triggered it) and SARIF
// (a related location). Fixtures: test/fixtures/realcode.

import assert from 'node:assert/strict';
import { readFileSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Report } from '../../server/src/model/types';
import { runCli } from '../helpers/cli';

const FIXTURES = 'test/fixtures/realcode';

/** 1-based line and column of the first occurrence of `needle` in a fixture file. */
function placeOf(file: string, needle: string): { line: number; column: number } {
  const text = readFileSync(file, 'utf8');
  const idx = text.indexOf(needle);
  assert.ok(idx >= 0, `${needle} not in ${file}`);
  const before = text.slice(0, idx);
  return { line: before.split('\n').length, column: idx - before.lastIndexOf('\n') };
}

describe('cli: exceptions in user code point at the line', function () {
  this.timeout(120_000);
  let report: Report;
  let sarif: { runs: { results: { relatedLocations?: { physicalLocation: { artifactLocation: { uri: string }; region: { startLine: number } } }[] }[] }[] };
  let human: string;

  before(async () => {
    const dir = mkdtempSync(join(tmpdir(), 'gp-realcode-'));
    try {
      const json = await runCli(['check', `${FIXTURES}/thrown/ops.ts`, '--json', '--sarif', join(dir, 'out.sarif')]);
      report = JSON.parse(json.stdout) as Report;
      sarif = JSON.parse(readFileSync(join(dir, 'out.sarif'), 'utf8')) as typeof sarif;
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
    human = (await runCli(['check', `${FIXTURES}/thrown/ops.ts`, '--no-color'])).stdout;
  });

  it("a helper in another file that throws: the helper's line, in JSON, human output and SARIF", () => {
    const pair = report.pairs.find((p) => p.forward === 'lightLog')!;
    assert.equal(pair.verdict, 'error');
    // `new RangeError(...)` is where V8 places the throw.
    const where = placeOf(`${FIXTURES}/thrown/lib/guard.ts`, 'new RangeError');
    assert.deepEqual(pair.thrownAt, { file: `${FIXTURES}/thrown/lib/guard.ts`, ...where });
    assert.match(human, new RegExp(`thrown at ${FIXTURES}/thrown/lib/guard\\.ts:${where.line}:${where.column}`));
    // The inputs that triggered it are recorded, as for a mismatch.
    assert.ok(pair.inputs && (pair.inputs.args[0] as { dtype: string }).dtype === 'f64', JSON.stringify(pair.inputs));
  });

  it("a backward that throws: its own line in the op's file, and a SARIF related location", () => {
    const pair = report.pairs.find((p) => p.forward === 'mistSquare')!;
    assert.equal(pair.verdict, 'error');
    const where = placeOf(`${FIXTURES}/thrown/ops.ts`, 'table.length');
    assert.equal(pair.thrownAt?.file, `${FIXTURES}/thrown/ops.ts`);
    assert.equal(pair.thrownAt?.line, where.line);
    const related = sarif.runs[0]!.results.map((r) => r.relatedLocations?.[0]?.physicalLocation);
    assert.ok(
      related.some((l) => l?.artifactLocation.uri === `${FIXTURES}/thrown/ops.ts` && l.region.startLine === where.line),
      JSON.stringify(related),
    );
  });
});

describe('cli: Node built-ins in the import graph', function () {
  this.timeout(120_000);

  it('an op that never calls them is checked; one that calls them fails naming the module and the call site', async () => {
    const run = await runCli(['check', `${FIXTURES}/imports/ops.ts`, '--json']);
    const report = JSON.parse(run.stdout) as Report;
    const curve = report.pairs.find((p) => p.forward === 'shadeCurve')!;
    assert.equal(curve.verdict, 'pass', curve.message);
    const logged = report.pairs.find((p) => p.forward === 'shadeLogged')!;
    assert.equal(logged.verdict, 'error');
    assert.match(logged.message, /node:path's basename\(\) is not available to code checked in the sandbox: "node:path" is a Node built-in module \(imported in log\.ts\)/);
    const call = placeOf(`${FIXTURES}/imports/log.ts`, 'basename(file)');
    assert.deepEqual(logged.thrownAt, { file: `${FIXTURES}/imports/log.ts`, ...call });
  });
});

describe('cli: backwards called as their parameter names say', function () {
  this.timeout(120_000);
  // Fixture: test/fixtures/realcode/signatures/ops.ts, no @backward argument lists. The correct
  // ops pass only if each backward got the arguments its names ask for (eps after dy, a loss's
  // gradient without $dy, parameters in another order); the planted twins must still be caught.
  it('(x, dy, eps), a loss gradient without dy, a reordered list: pass; the planted twins: mismatch', async () => {
    const run = await runCli(['check', `${FIXTURES}/signatures/ops.ts`, '--json']);
    const report = JSON.parse(run.stdout) as Report;
    const verdicts = Object.fromEntries(report.pairs.map((p) => [p.forward, p.verdict]));
    assert.deepEqual(verdicts, { layerNorm: 'pass', layerNormHalf: 'mismatch', peakLoss: 'pass', peakSlipLoss: 'mismatch', scale: 'pass' });
    assert.equal(run.code, 1);
    const slip = report.pairs.find((p) => p.forward === 'peakSlipLoss')!;
    assert.equal(slip.params.find((p) => p.verdict === 'mismatch')?.name, 'width');
  });
});

describe('cli: gradients left on the layer (@gradientField)', function () {
  this.timeout(120_000);
  // Fixture: test/fixtures/realcode/gradfields/layers.ts. The correct layers pass only if the
  // check read dW, db (and a void backward's dx, dg) from the fields, zeroed before each call;
  // the planted twins must still be caught on the parameter whose field is wrong.
  it('Linear and Gate pass; their twins are mismatches on the planted field; the untagged layer says which tags to add', async () => {
    const run = await runCli(['check', `${FIXTURES}/gradfields/layers.ts`, '--json']);
    const report = JSON.parse(run.stdout) as Report;
    const verdicts = Object.fromEntries(report.pairs.map((p) => [p.forward, p.verdict]));
    assert.deepEqual(verdicts, {
      'Linear.forward': 'pass',
      'LinearTransposed.forward': 'mismatch',
      'LinearUntagged.forward': 'error',
      'Gate.forward': 'pass',
      'GateSlip.forward': 'mismatch',
    });
    assert.equal(run.code, 1);
    const byParam = (forward: string) => Object.fromEntries(report.pairs.find((p) => p.forward === forward)!.params.map((p) => [p.name, p.verdict]));
    assert.deepEqual(byParam('LinearTransposed.forward'), { x: 'pass', 'this.W': 'mismatch', 'this.b': 'pass' });
    assert.deepEqual(byParam('GateSlip.forward'), { x: 'pass', 'this.g': 'mismatch' });
    const untagged = report.pairs.find((p) => p.forward === 'LinearUntagged.forward')!;
    assert.match(
      untagged.message,
      /the backward changed this\.dW \(8 elements, like this\.W\) and this\.db \(2, like this\.b\): if they hold those gradients, add `@gradientField this\.W this\.dW` and `@gradientField this\.b this\.db`/,
    );
  });
});
