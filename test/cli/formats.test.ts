// Tests of the report assembly and the three output formats (human table, SARIF 2.1.0,
// JUnit XML) on a hand-built set of results that covers every verdict and awkward text.

import assert from 'node:assert/strict';
import { join } from 'node:path';
import fc from 'fast-check';
import type { OpResult, ParamResult } from '../../server/src/model/types';
import { formatHuman, summaryLine } from '../../server/src/cli/human';
import { escapeXmlAttribute, escapeXmlText, formatJunit } from '../../server/src/cli/junit';
import { buildReport, exitCodeFor } from '../../server/src/cli/report';
import { worstParam } from '../../server/src/present/format';
import { formatSarif, SARIF_SCHEMA_URI } from '../../server/src/cli/sarif';
import { shouldUseColor } from '../../server/src/cli/terminal';
import { reportViolations } from './helpers/reportShape';
import { sarifViolations } from './helpers/sarifShape';
import { findAll, parseXml } from './helpers/xml';

const CWD = join('/', 'work', 'proj');

function param(name: string, verdict: ParamResult['verdict'], maxRelError: number, index: number[], hints: string[] = []): ParamResult {
  return {
    name,
    verdict,
    maxAbsError: maxRelError / 2,
    maxRelError,
    worst: { index, analytic: 0.5, numeric: 0.25 },
    shape: [4, 4],
    dtype: 'f64',
    method: 'full',
    elements: 16,
    checkedElements: 16,
    hints,
  };
}

function result(partial: Partial<OpResult> & Pick<OpResult, 'file' | 'line' | 'verdict'>): OpResult {
  return {
    forward: 'op',
    backward: 'opBackward',
    seed: 1234,
    message: '',
    hints: [],
    params: [],
    calls: { forward: 10, backward: 2 },
    elapsedMs: 3.4,
    ...partial,
  };
}

/** Absolute paths as the Checker gives them, in no particular order. */
const RESULTS: OpResult[] = [
  result({ file: join(CWD, 'src', 'c.ts'), line: 2, verdict: 'inconclusive', forward: 'clampedRamp', message: 'non-differentiable point near x[3] = 0' }),
  result({
    file: join(CWD, 'src', 'a.ts'),
    line: 20,
    verdict: 'mismatch',
    forward: 'Dense.forward',
    backward: 'backward',
    params: [param('bias', 'pass', 1e-11, [1]), param('weight', 'mismatch', 0.5, [2, 3], ['gradient is the transpose of the numeric one'])],
    hints: ['gradients of weight and bias look swapped'],
    elapsedMs: 1534,
  }),
  result({ file: join(CWD, 'src', 'a.ts'), line: 3, verdict: 'pass', forward: 'softplus', params: [param('x', 'pass', 3.1e-10, [5])] }),
  result({
    file: join(CWD, 'src', 'b & <c>.ts'),
    line: 5,
    verdict: 'error',
    forward: 'odd"name',
    backward: null,
    message: 'annotation problem: unknown tag @sampel; did you mean @sample? (line 7, column 12)',
    failure: 'annotation',
    problems: [{ line: 7, column: 12, message: 'unknown tag @sampel; did you mean @sample?' }],
    output: '\x1b[31mred\x1b[0m\u0001 and ]]> & <tag>\r\nsecond line',
  }),
  result({
    file: join(CWD, 'src', 'd.ts'),
    line: 1,
    verdict: 'error',
    forward: null,
    backward: null,
    message: 'the module could not be bundled: Could not resolve "./missing"',
    failure: 'bundle',
  }),
];

describe('report assembly', () => {
  const report = buildReport(RESULTS, CWD);

  it('makes paths relative with "/" and orders pairs by file, then line', () => {
    assert.deepEqual(
      report.pairs.map((p) => `${p.file}:${p.line}`),
      ['src/a.ts:3', 'src/a.ts:20', 'src/b & <c>.ts:5', 'src/c.ts:2', 'src/d.ts:1'],
    );
    assert.deepEqual(reportViolations(report), []);
  });

  it('counts every verdict in the summary', () => {
    assert.deepEqual(report.summary, { pass: 1, mismatch: 1, inconclusive: 1, error: 2 });
  });

  it('exits 1 for a mismatch or error, and for inconclusive only when asked', () => {
    assert.equal(exitCodeFor(report), 1);
    const mild = buildReport([RESULTS[0]!, RESULTS[2]!], CWD);
    assert.equal(exitCodeFor(mild), 0);
    assert.equal(exitCodeFor(mild, { failOnInconclusive: true }), 1);
    assert.equal(exitCodeFor(buildReport([], CWD)), 0);
  });

  it('exits 1 for an op the time limit stopped before every element was compared, unless allowed', () => {
    const stopped = {
      ...RESULTS[0]!,
      stoppedAtTimeLimit: { param: 'x', stage: 'elements' as const, done: 640, total: 10_000, timeLimitMs: 500 },
    };
    const unfinished = buildReport([RESULTS[2]!, stopped], CWD);
    assert.equal(exitCodeFor(unfinished), 1);
    assert.equal(exitCodeFor(unfinished, { allowUnfinished: true }), 0);
    assert.equal(exitCodeFor(unfinished, { allowUnfinished: true, failOnInconclusive: true }), 1);
  });

  it('names the parameter that explains the verdict', () => {
    assert.equal(worstParam(report.pairs[1]!)?.name, 'weight');
    // A pass names its largest error.
    assert.equal(worstParam({ verdict: 'pass', params: [param('a', 'pass', 1e-12, [0]), param('b', 'pass', 1e-9, [0])] })?.name, 'b');
  });

  it('the schema check itself catches a broken report', () => {
    const broken = JSON.parse(JSON.stringify(report));
    broken.pairs[0].line = 0;
    broken.pairs[1].file = 'C:\\x.ts';
    broken.summary.pass = 3;
    delete broken.pairs[2].hints;
    assert.equal(reportViolations(broken).length, 5);
  });
});

describe('human output', () => {
  const report = buildReport(RESULTS, CWD);
  const text = formatHuman(report, { color: false, fileCount: 4, elapsedMs: 2345 });
  const lines = text.trimEnd().split('\n');

  it('ends with the summary line', () => {
    assert.equal(lines.at(-1), '5 ops in 4 files: 1 pass, 1 mismatch, 1 inconclusive, 2 error (2.3 s)');
    assert.equal(summaryLine(buildReport([], CWD), { fileCount: 1 }), 'no annotated ops found in 1 file');
  });

  it('has no escape sequences without colour, and coloured verdicts with it', () => {
    assert.doesNotMatch(text, /\x1b/);
    const coloured = formatHuman(report, { color: true });
    assert.match(coloured, /\x1b\[31;1mMISMATCH\x1b\[0m/);
    assert.match(coloured, /\x1b\[32mpass\x1b\[0m/);
    assert.equal(coloured.replace(/\x1b\[[0-9;]*m/g, ''), formatHuman(report, { color: false }), 'colour changes nothing else');
  });

  it('lays one row per op in aligned columns under a heading', () => {
    const heading = lines[0]!;
    const rows = lines.filter((l) => /^\s+\d+\s{2}/.test(l));
    assert.equal(rows.length, 5);
    const verdictColumn = heading.indexOf('verdict');
    const indexColumn = heading.indexOf('worst index');
    for (const row of rows) {
      assert.match(row.slice(verdictColumn), /^(pass|MISMATCH|inconclusive|ERROR) /, row);
      assert.notEqual(row[indexColumn - 1], undefined);
      assert.equal(row[indexColumn - 1], ' ', `column boundary in: ${row}`);
    }
    const mismatchRow = rows.find((r) => r.includes('Dense.forward'))!;
    assert.match(mismatchRow, /MISMATCH\s+weight\s+5\.0e-1\s+\[2, 3\]\s+1\.5 s$/);
    assert.match(
      rows.find((r) => r.includes('softplus'))!,
      /pass\s+x\s+3\.1e-10\s+\[5\]\s+3 ms$/,
    );
  });

  it('explains rows that did not pass: evidence, hints, problems at file:line:column, seed, output', () => {
    assert.match(text, /weight \(mismatch\): max rel error 5\.0e-1, max abs error 0\.25; at weight\[2, 3\] backward gives 0\.5, finite differences 0\.25/);
    assert.match(text, /hint: gradient is the transpose of the numeric one/);
    assert.match(text, /hint: gradients of weight and bias look swapped/);
    assert.match(text, /^\s+src\/b & <c>\.ts:7:12: unknown tag @sampel; did you mean @sample\?$/m);
    assert.match(text, /^\s+annotation problem$/m, 'the message does not repeat the problem listed below it');
    assert.match(text, /^\s+non-differentiable point near x\[3\] = 0$/m);
    assert.match(text, /^\s+seed 1234$/m);
    assert.match(text, /\| red and ]]> & <tag>$/m, 'user output is shown without control characters');
    assert.doesNotMatch(text, /bias \(pass\)/, 'passing parameters are not explained');
  });

  it('colours a terminal unless NO_COLOR is set and non-empty or TERM is dumb (no-color.org convention)', () => {
    assert.equal(shouldUseColor('auto', true, {}), true);
    assert.equal(shouldUseColor('auto', false, {}), false);
    assert.equal(shouldUseColor('auto', true, { NO_COLOR: '1' }), false);
    assert.equal(shouldUseColor('auto', true, { NO_COLOR: '' }), true);
    assert.equal(shouldUseColor('auto', true, { TERM: 'dumb' }), false);
    assert.equal(shouldUseColor('always', false, { NO_COLOR: '1' }), true);
    assert.equal(shouldUseColor('never', true, {}), false);
  });

  it('lists only problems when asked, still counting all in the summary', () => {
    const only = formatHuman(report, { color: false, onlyProblems: true });
    assert.doesNotMatch(only, /softplus/);
    assert.match(only, /Dense\.forward/);
    assert.match(only.trimEnd().split('\n').at(-1)!, /^5 ops: 1 pass/);
  });
});

describe('SARIF output', () => {
  const report = buildReport(RESULTS, CWD);
  const log = JSON.parse(formatSarif(report, { toolVersion: '9.8.7', rootDir: CWD }));
  const results = log.runs[0].results as {
    ruleId: string;
    level: string;
    message: { text: string };
    locations: { physicalLocation: { artifactLocation: { uri: string; uriBaseId?: string }; region: { startLine: number; startColumn: number } } }[];
  }[];

  it('has the structure SARIF 2.1.0 requires', () => {
    assert.deepEqual(sarifViolations(log), []);
    assert.equal(log.$schema, SARIF_SCHEMA_URI);
    assert.equal(log.runs[0].tool.driver.version, '9.8.7');
    assert.equal(log.runs[0].originalUriBaseIds['%SRCROOT%'].uri, 'file:///work/proj/');
  });

  it('reports every op that did not pass, at its place, with a level by verdict', () => {
    assert.deepEqual(
      results.map((r) => [r.ruleId, r.level]),
      [
        ['gradient-mismatch', 'error'],
        ['annotation-problem', 'error'],
        ['check-inconclusive', 'warning'],
        ['check-error', 'error'],
      ],
    );
    const [mismatch, problem] = results;
    assert.deepEqual(mismatch!.locations[0]!.physicalLocation.region, { startLine: 20, startColumn: 1 });
    assert.deepEqual(problem!.locations[0]!.physicalLocation.region, { startLine: 7, startColumn: 12 });
    assert.deepEqual(problem!.locations[0]!.physicalLocation.artifactLocation, { uri: 'src/b%20%26%20%3Cc%3E.ts', uriBaseId: '%SRCROOT%' });
    assert.match(mismatch!.message.text, /^Dense\.forward: gradient of weight disagrees with finite differences \(max relative error 5\.0e-1 at \[2, 3\]/);
    assert.match(mismatch!.message.text, /Hint: gradient is the transpose of the numeric one\./);
    // Why an error could not be checked travels as a property, as in the JSON report.
    const failures = results.map((r) => (r as unknown as { properties: Record<string, unknown> }).properties['failure']);
    assert.deepEqual(failures, [undefined, 'annotation', undefined, 'bundle']);
  });

  it('reports an op the time limit stopped as an error of its own rule, not a warning', () => {
    const stopped = { ...RESULTS[0]!, stoppedAtTimeLimit: { param: 'x', stage: 'elements' as const, done: 64, total: 900, timeLimitMs: 500 } };
    const unfinished = JSON.parse(formatSarif(buildReport([stopped], CWD), { toolVersion: '9.8.7', rootDir: CWD }));
    assert.deepEqual(sarifViolations(unfinished), []);
    assert.deepEqual(
      unfinished.runs[0].results.map((r: { ruleId: string; level: string }) => [r.ruleId, r.level]),
      [['check-unfinished', 'error']],
    );
    // JUnit follows the same policy as the exit code: a failure, or skipped with --allow-unfinished.
    const junit = parseXml(formatJunit(buildReport([stopped], CWD)));
    assert.equal(junit.attributes['failures'], '1');
    assert.equal(parseXml(formatJunit(buildReport([stopped], CWD), { allowUnfinished: true })).attributes['skipped'], '1');
  });

  it('the structure check itself catches a broken log', () => {
    const broken = JSON.parse(JSON.stringify(log));
    broken.version = '2.0.0';
    broken.runs[0].results[0].locations[0].physicalLocation.region.startLine = 0;
    broken.runs[0].results[1].ruleIndex = 0;
    broken.runs[0].results[2].locations[0].physicalLocation.artifactLocation.uri = 'src\\c.ts';
    delete broken.runs[0].results[3].message.text;
    assert.equal(sarifViolations(broken).length, 5);
  });
});

describe('JUnit output', () => {
  const report = buildReport(RESULTS, CWD);
  const doc = parseXml(formatJunit(report));

  it('is well-formed, with counts that add up', () => {
    assert.equal(doc.name, 'testsuites');
    assert.deepEqual([doc.attributes['tests'], doc.attributes['failures'], doc.attributes['errors'], doc.attributes['skipped']], ['5', '1', '2', '1']);
    const suites = findAll(doc, 'testsuite');
    assert.deepEqual(
      suites.map((s) => s.attributes['name']),
      ['src/a.ts', 'src/b & <c>.ts', 'src/c.ts', 'src/d.ts'],
    );
    assert.equal(findAll(doc, 'testcase').length, 5);
    assert.equal(suites[0]!.attributes['time'], '1.537');
  });

  it('keeps awkward names and output intact through escaping', () => {
    const cases = findAll(doc, 'testcase');
    const odd = cases.find((c) => c.attributes['classname'] === 'src/b & <c>.ts')!;
    assert.equal(odd.attributes['name'], 'odd"name');
    assert.equal(findAll(odd, 'system-out')[0]!.text, '\uFFFD[31mred\uFFFD[0m\uFFFD and ]]> & <tag>\r\nsecond line');
    const error = findAll(odd, 'error')[0]!;
    assert.equal(error.attributes['message'], 'src/b & <c>.ts:7:12: unknown tag @sampel; did you mean @sample?');
    const failure = findAll(doc, 'failure')[0]!;
    assert.equal(failure.attributes['type'], 'mismatch');
    assert.match(failure.text, /weight \(mismatch\)/);
    assert.equal(findAll(doc, 'skipped').length, 1);
  });

  it('turns inconclusive into a failure when inconclusive fails the run', () => {
    const strict = parseXml(formatJunit(report, { failOnInconclusive: true }));
    assert.deepEqual([strict.attributes['failures'], strict.attributes['skipped']], ['2', '0']);
  });

  it('escapes any text so that it parses back to itself (illegal characters become U+FFFD)', () => {
    fc.assert(
      fc.property(fc.string({ unit: 'binary', maxLength: 40 }), (s) => {
        const el = parseXml(`<a v="${escapeXmlAttribute(s)}">${escapeXmlText(s)}</a>`);
        const expected = s.replace(/[^\t\n\r\u0020-\uD7FF\uE000-\uFFFD\u{10000}-\u{10FFFF}]/gu, '\uFFFD');
        return el.attributes['v'] === expected && el.text === expected;
      }),
      { numRuns: 2000, seed: 20240 },
    );
  });

  it('the XML reader itself refuses malformed documents', () => {
    for (const bad of ['<a>', '<a></b>', '<a x="1" x="2"/>', '<a>&nope;</a>', '<a>& </a>', '<a x="<"/>', '<a/><b/>', '<a>\u0001</a>', '<a>]]></a>']) {
      assert.throws(() => parseXml(bad), Error, bad);
    }
  });
});
