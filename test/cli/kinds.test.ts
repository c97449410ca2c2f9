// The derivative kinds through the real command line: the table shows each kind as its own
// line, the JSON report carries `kind`, and SARIF and JUnit name the kind and the wrong entry.

import assert from 'node:assert/strict';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { runCli } from '../helpers/cli';
import { reportViolations } from './helpers/reportShape';

const FILE = 'test/corpus/derivatives.ts';

describe('command line: @jacobian, @tangent and @hessian ops', function () {
  let dir = '';
  let table = '';
  let report: { pairs: { forward: string; kind?: string; verdict: string; message: string }[] } = { pairs: [] };
  before(async function () {
    this.timeout(120_000);
    dir = mkdtempSync(join(tmpdir(), 'gp-kinds-'));
    const human = await runCli(['check', FILE, '--no-color']);
    table = human.stdout;
    const json = await runCli(['check', FILE, '--json', '--sarif', join(dir, 'out.sarif'), '--junit', join(dir, 'out.xml')]);
    report = JSON.parse(json.stdout);
    assert.deepEqual(reportViolations(report), []);
  });
  after(() => rmSync(dir, { recursive: true, force: true }));

  it('the table has one line per derivative, the kind after the forward name', () => {
    assert.match(table, /ventArm @jacobian\s+pass/);
    assert.match(table, /ventArm @tangent\s+pass/);
    assert.match(table, /heatCost\s+pass/);
    assert.match(table, /heatCost @hessian\s+pass/);
    assert.match(table, /shadeArm @jacobian\s+MISMATCH/);
    assert.match(table, /J\[1, 0\] \(output 1, q\[0\]\): jacobian gives/);
  });

  it('JSON pairs carry kind (absent on the plain @backward op)', () => {
    const byName = Object.fromEntries(report.pairs.map((p) => [p.forward, p]));
    assert.equal(byName['ventArm @jacobian']?.kind, 'jacobian');
    assert.equal(byName['ventArm @tangent']?.kind, 'tangent');
    assert.equal(byName['heatCost @hessian']?.kind, 'hessian');
    assert.equal(byName['heatCost']?.kind, undefined);
    assert.match(byName['heatCost @hessian']!.message, /reference: central differences of the @backward 'heatCostGrad', which passes/);
    assert.match(byName['boilerCost @hessian']!.message, /reference: second differences of the forward/);
  });

  it('SARIF results name the kind, JUnit has a test case per derivative', () => {
    const sarif = JSON.parse(readFileSync(join(dir, 'out.sarif'), 'utf8')) as { runs: { results: { message: { text: string }; properties: Record<string, unknown> }[] }[] };
    const shade = sarif.runs[0]!.results.find((r) => r.properties['forward'] === 'shadeArm @jacobian');
    assert.ok(shade, 'no SARIF result for shadeArm @jacobian');
    assert.equal(shade.properties['kind'], 'jacobian');
    assert.match(shade.message.text, /the jacobian disagrees with finite differences.*J\[1, 0\]/s);
    const junit = readFileSync(join(dir, 'out.xml'), 'utf8');
    assert.match(junit, /name="ventArm @tangent"/);
    assert.match(junit, /name="boilerCost @hessian"/);
  });
});
