// The accuracy bar (test/corpus/README.md, "the bar"): runs the real command line over the labelled corpus in
// test/corpus and holds it to the bar (no correct op flagged, ≥ 95 % of bugs caught, no kink
// called a mismatch, every broken op an error), then compares it with a fixed-step loop.

import assert from 'node:assert/strict';
import { spawnSync } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { classSummary, formatTable, judge, loadLabels, type JudgedOp, type ReportedPair } from './corpusLabels';
import { fixedStepCheck, FIXED_REL_TOLERANCE, FIXED_STEP } from './fixedStepLoop';
import { findSimpleOps } from './sampleSpecs';
import * as elementwise from '../corpus/elementwise';
import * as linear from '../corpus/linear';
import * as normalize from '../corpus/normalize';
import * as scaled from '../corpus/scaled';
import * as float32 from '../corpus/float32';
import * as outputs from '../corpus/outputs';
import * as precision from '../corpus/precision';

/** Share of bug ops that must be called mismatch (test/corpus/README.md). */
const REQUIRED_BUG_RECALL = 0.95;
/** Seed of the fixed-step contrast's inputs and upstream gradients. */
const CONTRAST_SEED = 1234;

/** The repository root: the folder whose package.json names this project. */
function findRoot(): string {
  for (const start of [__dirname, process.cwd()]) {
    for (let dir = start; ; dir = dirname(dir)) {
      const pkg = join(dir, 'package.json');
      if (existsSync(pkg) && (JSON.parse(readFileSync(pkg, 'utf8')) as { name?: string }).name === 'gradient-probe') return dir;
      if (dirname(dir) === dir) break;
    }
  }
  throw new Error('cannot find the gradient-probe repository root');
}

const root = findRoot();

describe('accuracy corpus through the command line', function () {
  let ops: JudgedOp[] = [];
  let unlabelled: ReportedPair[] = [];
  let status: number | null = null;

  before(function () {
    this.timeout(15 * 60_000);
    assert.ok(existsSync(join(root, 'dist', 'cli.js')), 'dist/cli.js is missing: run `npm run build` first');
    const run = spawnSync(process.execPath, ['bin/gradient-probe.js', 'check', 'test/corpus', '--json'], {
      cwd: root,
      encoding: 'utf8',
      maxBuffer: 256 * 1024 * 1024,
    });
    status = run.status;
    let report: { version: number; pairs: ReportedPair[] };
    try {
      report = JSON.parse(run.stdout) as typeof report;
    } catch {
      throw new Error(`the CLI did not print a JSON report (exit ${run.status}).\nstdout: ${run.stdout.slice(0, 2000)}\nstderr: ${run.stderr.slice(0, 2000)}`);
    }
    assert.equal(report.version, 1);
    ({ ops, unlabelled } = judge(loadLabels(root), report.pairs));
    console.log(`\n      corpus verdicts per class:\n${classSummary(ops).replace(/^/gm, '        ')}`);
  });

  const ofClass = (c: JudgedOp['label']): JudgedOp[] => ops.filter((o) => o.label === c);

  it('holds the required mix of labelled ops (test/corpus/README.md)', function () {
    const counts: Record<string, number> = { correct: 0, bug: 0, kink: 0, broken: 0 };
    for (const entries of Object.values(loadLabels(root))) for (const l of Object.values(entries)) counts[l.class]++;
    const total = Object.values(counts).reduce((a, b) => a + b, 0);
    assert.ok(total >= 40 && counts.correct >= 16 && counts.bug >= 14 && counts.kink >= 4 && counts.broken >= 5, JSON.stringify(counts));
  });

  it('exits with 1, because the corpus holds mismatches and errors (README, "Command line")', function () {
    assert.equal(status, 1);
  });

  it('reports every labelled op, and nothing unlabelled', function () {
    const absent = ops.filter((o) => o.verdict === 'absent');
    assert.deepEqual(
      absent.map((o) => `${o.file} ${o.forward}`),
      [],
      'labelled ops missing from the report',
    );
    assert.deepEqual(
      unlabelled.map((p) => `${p.file}:${p.line} ${p.forward} ${p.verdict} ${p.message}`),
      [],
      'reported ops without a label',
    );
  });

  it('passes every correct op', function () {
    const flagged = ofClass('correct').filter((o) => o.verdict !== 'pass');
    assert.equal(flagged.length, 0, `correct ops not passed:\n${formatTable(flagged)}\n\nall correct ops:\n${formatTable(ofClass('correct'))}`);
  });

  it(`calls at least ${REQUIRED_BUG_RECALL * 100} % of bug ops mismatch`, function () {
    const bugs = ofClass('bug');
    const caught = bugs.filter((o) => o.verdict === 'mismatch').length;
    assert.ok(bugs.length >= 14, 'the corpus needs at least 14 bug ops');
    assert.ok(
      caught >= REQUIRED_BUG_RECALL * bugs.length,
      `${caught} of ${bugs.length} bug ops called mismatch:\n${formatTable(bugs.filter((o) => o.verdict !== 'mismatch'))}\n\nall bug ops:\n${formatTable(bugs)}`,
    );
  });

  it('never calls a kink op mismatch', function () {
    const kinks = ofClass('kink');
    const wrong = kinks.filter((o) => o.verdict === 'mismatch');
    assert.equal(wrong.length, 0, `kink ops called mismatch:\n${formatTable(kinks)}`);
    // An error is no answer either: the kink ops are well-formed and must be checked.
    const errors = kinks.filter((o) => o.verdict === 'error');
    assert.equal(errors.length, 0, `kink ops that could not be checked:\n${formatTable(errors)}`);
  });

  it('gets the three precision traps right: each correct op passes and each buggy twin is a mismatch (test/corpus/precision.ts)', function () {
    // Labels of test/corpus/precision.ts; each follows from a handbook derivative named there.
    const traps = ops.filter((o) => o.file === 'precision.ts');
    assert.equal(traps.length, 6, formatTable(traps));
    for (const o of traps) assert.equal(o.verdict, o.label === 'bug' ? 'mismatch' : 'pass', formatTable(traps));
  });

  it('calls every broken op error, with a message', function () {
    const broken = ofClass('broken');
    const wrong = broken.filter((o) => o.verdict !== 'error' || o.message.trim() === '');
    assert.equal(wrong.length, 0, `broken ops not reported as error with a message:\n${formatTable(broken)}`);
  });

  describe(`contrast: a fixed-step loop (step ${FIXED_STEP}, relative tolerance ${FIXED_REL_TOLERANCE}, no refinement)`, function () {
    it('misses bugs and raises false alarms that the engine does not', function () {
      const modules: Record<string, Record<string, unknown>> = {
        'elementwise.ts': elementwise,
        'linear.ts': linear,
        'normalize.ts': normalize,
        'scaled.ts': scaled,
        'float32.ts': float32,
        'outputs.ts': outputs,
        'precision.ts': precision,
      };
      const lines: string[] = [];
      let loopMisses = 0;
      let loopFalseAlarms = 0;
      let engineMisses = 0;
      let engineFalseAlarms = 0;
      let compared = 0;
      for (const [file, fns] of Object.entries(modules)) {
        for (const op of findSimpleOps(file, readFileSync(join(root, 'test', 'corpus', file), 'utf8'))) {
          const judged = ops.find((o) => o.file === file && o.forward === op.forward);
          if (!judged || (judged.label !== 'correct' && judged.label !== 'bug')) continue;
          compared++;
          const loop = fixedStepCheck(op, fns, CONTRAST_SEED);
          const loopWrong = judged.label === 'bug' ? !loop.flagged : loop.flagged;
          const engineWrong = judged.label === 'bug' ? judged.verdict !== 'mismatch' : judged.verdict !== 'pass';
          if (judged.label === 'bug') {
            loopMisses += Number(loopWrong);
            engineMisses += Number(engineWrong);
          } else {
            loopFalseAlarms += Number(loopWrong);
            engineFalseAlarms += Number(engineWrong);
          }
          if (loopWrong || engineWrong) {
            const loopSays = `${loop.flagged ? 'flagged' : 'passed'} (worst rel ${loop.worstRelError.toExponential(2)})`;
            lines.push(`${file} ${op.forward} [${judged.label}]: loop ${loopSays}${loopWrong ? ' WRONG' : ''}; engine ${judged.verdict}${engineWrong ? ' WRONG' : ''}`);
          }
        }
      }
      console.log(
        `\n      fixed-step loop vs engine over ${compared} simple ops:` +
          `\n        loop:   ${loopMisses} missed bugs, ${loopFalseAlarms} false alarms` +
          `\n        engine: ${engineMisses} missed bugs, ${engineFalseAlarms} false alarms (anything but pass on a correct op)` +
          `\n${lines.map((l) => `        ${l}`).join('\n')}`,
      );
      assert.ok(compared >= 30, `only ${compared} simple ops compared`);
      // The corpus must contain what defeats a fixed-step loop, or this contrast shows nothing.
      assert.ok(loopMisses >= 1 && loopFalseAlarms >= 1, 'the corpus no longer trips the fixed-step loop both ways');
      assert.ok(
        engineMisses + engineFalseAlarms < loopMisses + loopFalseAlarms,
        `engine (${engineMisses} + ${engineFalseAlarms}) is not strictly better than the fixed-step loop (${loopMisses} + ${loopFalseAlarms})`,
      );
    });
  });
});
