// The central difference's error against step size (Nocedal & Wright, Numerical Optimization,
// 2nd ed., §8.1): truncation error falls as h² until roundoff, growing as u/h, takes over near
// h ≈ u^(1/3). Read from the step scan the engine reports for a correct op.

import assert from 'node:assert/strict';
import { check, functionOp, show, spec } from './opBuilder';

function scanOf(f: (x: number) => number, df: (x: number) => number, at: number) {
  const o = check(
    functionOp({
      forward: (x: number) => f(x),
      backward: (x: number) => df(x),
      params: [['x', spec('num', [], [at, at])]],
      backwardArgs: ['x'],
    }),
    // A passing parameter is pictured only when asked for (the report page asks).
    { stepScans: 'all' },
  );
  assert.equal(o.verdict, 'pass', show(o));
  const scan = o.params[0].stepScan;
  assert.ok(scan, 'a passing op asked for all pictures reports a step scan');
  const err = (h: number): number => {
    const k = scan.steps.findIndex((s) => Math.abs(s / h - 1) < 1e-9);
    assert.ok(k >= 0, `step ${h} is in the scan`);
    return scan.absErrors[k];
  };
  let best = 0;
  for (let k = 1; k < scan.steps.length; k++) if (scan.absErrors[k] < scan.absErrors[best]) best = k;
  return { err, bestStep: scan.steps[best], scan };
}

describe('engine: central-difference error against step (Nocedal & Wright §8.1)', () => {
  for (const [name, f, df, at] of [
    ['exp at 0.5', Math.exp, Math.exp, 0.5],
    ['sin at 0.7', Math.sin, Math.cos, 0.7],
  ] as const) {
    it(`${name}: error falls 100× per decade of h in the truncation regime`, () => {
      const { err } = scanOf(f, df, at);
      // N&W §8.1: central-difference truncation error is (h²/6)|f'''| + O(h⁴), so 1e-2 → 1e-3 divides it by 100.
      const ratio = err(1e-2) / err(1e-3);
      assert.ok(ratio > 95 && ratio < 105, `error ratio ${ratio} should be ≈ 100`);
      // The leading term itself: (h²/6)|f'''(x)| at h = 1e-2, within 1 %.
      const third = name.startsWith('exp') ? Math.exp(at) : Math.cos(at);
      const predicted = (1e-4 / 6) * third;
      assert.ok(Math.abs(err(1e-2) / predicted - 1) < 0.01, `error ${err(1e-2)} vs (h²/6)|f'''| = ${predicted}`);
    });

    it(`${name}: the smallest error is near u^(1/3) ≈ 5e-6, roundoff dominates below`, () => {
      const { err, bestStep } = scanOf(f, df, at);
      // N&W §8.1: optimal step ≈ (3u|f|/|f'''|)^(1/3), about 5e-6..1e-5 here: the best decade is 1e-5 or 1e-6.
      assert.ok(
        [1e-5, 1e-6].some((s) => Math.abs(bestStep / s - 1) < 1e-9),
        `best step ${bestStep}`,
      );
      // Roundoff grows as u/h: four decades below the optimum the error is far larger.
      assert.ok(err(1e-10) > 100 * err(1e-6), `err(1e-10) = ${err(1e-10)}, err(1e-6) = ${err(1e-6)}`);
      assert.ok(err(1e-13) > err(1e-10), `err(1e-13) = ${err(1e-13)}, err(1e-10) = ${err(1e-10)}`);
    });
  }

  it('a wrong gradient shows a flat floor instead of the V', () => {
    const o = check(
      functionOp({
        forward: (x: number) => Math.exp(x),
        backward: (x: number) => 1.01 * Math.exp(x),
        params: [['x', spec('num', [], [0.5, 0.5])]],
        backwardArgs: ['x'],
      }),
    );
    assert.equal(o.verdict, 'mismatch', show(o));
    const scan = o.params[0].stepScan!;
    // In the truncation regime the error no longer moves with h: it is the 1 % gap itself.
    const gap = 0.01 * Math.exp(0.5);
    for (let k = 0; k < scan.steps.length; k++) {
      if (scan.steps[k] <= 1e-3 && scan.steps[k] >= 1e-8) assert.ok(Math.abs(scan.absErrors[k] / gap - 1) < 1e-3, `step ${scan.steps[k]}: ${scan.absErrors[k]}`);
    }
  });

  it('by default no passing parameter is pictured, each one that does not pass is; "all" adds the passing one nearest its tolerance', () => {
    const op = (wrongC: number) =>
      functionOp({
        forward: (a: number, b: number, c: number) => Math.exp(a) * Math.sin(b) + c * c,
        backward: (a: number, b: number, c: number, dy: number) => [dy * Math.exp(a) * Math.sin(b), dy * Math.exp(a) * Math.cos(b), dy * 2 * c * wrongC],
        params: [
          ['a', spec('num', [], [0.2, 0.9])],
          ['b', spec('num', [], [0.2, 0.9])],
          ['c', spec('num', [], [0.2, 0.9])],
        ],
      });
    const plain = check(op(1));
    assert.equal(plain.verdict, 'pass', show(plain));
    assert.deepEqual(
      plain.params.filter((p) => p.stepScan !== undefined),
      [],
      'the default draws no picture of a passing op',
    );
    assert.equal(plain.calls.stepScanForward, undefined);

    const all = check(op(1), { stepScans: 'all' });
    assert.equal(all.verdict, 'pass', show(all));
    const pictured = all.params.filter((p) => p.stepScan !== undefined);
    assert.equal(pictured.length, 1, show(all));
    const nearest = all.params.reduce((best, p) => (p.maxRelError > best.maxRelError ? p : best));
    assert.equal(pictured[0], nearest);
    assert.equal(all.calls.stepScanForward, 26);
    // The picture is the only difference: the same verdict and figures, 26 more forward calls.
    assert.equal(plain.calls.forward + 26, all.calls.forward);
    assert.equal(check(op(1), { stepScans: 'none' }).calls.forward, plain.calls.forward);
    assert.deepEqual(
      all.params.map((p) => [p.name, p.verdict, p.maxRelError, p.worst]),
      plain.params.map((p) => [p.name, p.verdict, p.maxRelError, p.worst]),
    );

    const wrong = check(op(1.01));
    assert.equal(wrong.verdict, 'mismatch', show(wrong));
    assert.ok(wrong.params[2].stepScan, 'the mismatched parameter has its picture by default');
    assert.equal(wrong.params.filter((p) => p.verdict === 'pass' && p.stepScan !== undefined).length, 0, show(wrong));
    assert.equal(wrong.calls.stepScanForward, 26);
    const wrongAll = check(op(1.01), { stepScans: 'all' });
    assert.ok(wrongAll.params[2].stepScan);
    assert.equal(wrongAll.params.filter((p) => p.verdict === 'pass' && p.stepScan !== undefined).length, 1, show(wrongAll));
    assert.equal(wrongAll.calls.stepScanForward, 52);
  });

  it('an inconclusive parameter keeps its picture by default ("does not pass" is more than mismatch); "mismatch" drops it', () => {
    // Float64 spacing at 1e30 is about 1.4e14 (IEEE 754-2019 binary64): no step in [-1, 1]
    // moves 1e30 + x, so the gradient 1 is neither confirmed nor refuted (badlyScaled.test.ts).
    const op = functionOp({ forward: (x: number) => 1e30 + x, backward: () => 1, params: [['x', spec('num', [], [-1, 1])]], backwardArgs: ['x'] });
    const o = check(op);
    assert.equal(o.verdict, 'inconclusive', show(o));
    assert.ok(o.params[0].stepScan, show(o));
    // Every step's central difference is 0 (the output never moves), so each error is |1 - 0|.
    assert.ok(o.params[0].stepScan.absErrors.length > 0 && o.params[0].stepScan.absErrors.every((e) => e === 1));
    const narrowed = check(op, { stepScans: 'mismatch' });
    assert.equal(narrowed.params[0].stepScan, undefined);
    assert.equal(narrowed.calls.forward + o.calls.stepScanForward!, o.calls.forward);
  });

  it('a forward that throws at a step of the picture costs the picture, never the verdict', () => {
    // x is drawn at 0.5 only; the check's own steps stay within ~1e-5 of it (N&W §8.1), the
    // picture's reach 0.1, where this forward throws.
    const op = (factor: number) =>
      functionOp({
        forward: (x: number) => {
          if (x > 0.58) throw new Error('beyond the cliff');
          return x * x;
        },
        backward: (x: number) => factor * 2 * x,
        params: [['x', spec('num', [], [0.5, 0.5])]],
        backwardArgs: ['x'],
      });
    const plain = check(op(1));
    assert.equal(plain.verdict, 'pass', show(plain));
    const all = check(op(1), { stepScans: 'all' });
    assert.equal(all.verdict, 'pass', show(all));
    assert.equal(all.params[0].stepScan, undefined);
    assert.equal(all.params[0].maxRelError, plain.params[0].maxRelError);
    // A mismatch stays a mismatch, with the same figures, though its picture could not be drawn.
    const wrong = check(op(1.01));
    assert.equal(wrong.verdict, 'mismatch', show(wrong));
    assert.equal(wrong.params[0].stepScan, undefined);
    // |1.01 − 1| / max(1.01, 1) (the relative error of engine/settings.ts), 1 being d(x²)/dx at 0.5.
    assert.ok(Math.abs(wrong.params[0].maxRelError - 0.01 / 1.01) < 1e-9, show(wrong));
  });

  it('settings.stepScans: "mismatch" keeps the scan of a mismatch; "none" skips it', () => {
    const op = (factor: number) =>
      functionOp({
        forward: (x: number) => Math.exp(x),
        backward: (x: number) => factor * Math.exp(x),
        params: [['x', spec('num', [], [0.5, 0.5])]],
        backwardArgs: ['x'],
      });
    const pass = check(op(1), { stepScans: 'mismatch' });
    assert.equal(pass.params[0].stepScan, undefined);
    const all = check(op(1), { stepScans: 'all' });
    assert.equal(pass.calls.forward + 26, all.calls.forward, 'the scan costs 26 forward calls');
    assert.ok(check(op(1.01), { stepScans: 'mismatch' }).params[0].stepScan);
    assert.equal(check(op(1.01), { stepScans: 'none' }).params[0].stepScan, undefined);
  });
});
