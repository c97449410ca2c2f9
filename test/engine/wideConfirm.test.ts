// The short confirmation of a wide mismatch (engine/wideConfirm.ts) on scalar lines built by hand:
// it confirms a derivative that is wrong far beyond every signature of error, and never a correct
// one whose central difference is fooled by a kink inside the step or by a function that changes
// over a scale near the step. References: d/dx sin x = cos x (Abramowitz & Stegun 4.3.105),
// d/dx |x − c| = sign(x − c) away from c.

import assert from 'node:assert/strict';
import type { Line } from '../../server/src/engine/lines';
import { confirmWide } from '../../server/src/engine/wideConfirm';

const U64 = 2 ** -53;
const TOL = 1e-6;

/** The line x0 + t through a scalar function, with the engine's central step for float64 (u^(1/3)·max(1, |x|), Nocedal & Wright §8.1). */
function scalarLine(f: (x: number) => number, x0: number): { line: Line; y0: Float64Array } {
  const h = Math.cbrt(U64) * Math.max(1, Math.abs(x0));
  const line = {
    centralStep: h,
    maxStep: 0.05,
    refineStep: 0.05,
    slot: null as never,
    element: 0,
    evalAt(t: number, out: Float64Array): number {
      out[0] = f(x0 + t);
      return t;
    },
  } satisfies Line;
  return { line, y0: Float64Array.of(f(x0)) };
}

function confirm(f: (x: number) => number, x0: number, derivative: number): ReturnType<typeof confirmWide> {
  const { line, y0 } = scalarLine(f, x0);
  return confirmWide(line, [Float64Array.of(1)], y0, Float64Array.of(derivative), U64, TOL, Float64Array.of(0), new Float64Array(1), new Float64Array(1));
}

describe("engine: a wide mismatch confirmed from the element's own line", () => {
  it('confirms a derivative wrong by 1e-3 (sin at 0.7) and not the right one', () => {
    const c = confirm(Math.sin, 0.7, Math.cos(0.7) * (1 + 1e-3));
    assert.ok(c !== null);
    assert.ok(Math.abs(c.numeric - Math.cos(0.7)) < 1e-8, String(c.numeric));
    assert.equal(confirm(Math.sin, 0.7, Math.cos(0.7)), null);
  });

  it('does not confirm a right one-sided slope when a kink sits inside the step or the doubled step', () => {
    const x0 = 0.3;
    const h = Math.cbrt(U64);
    for (const offset of [0.1, 0.3, 0.7, 0.95, 1.2, 1.8]) {
      const c = x0 + offset * h;
      // Left of the kink the slope is −1, which a correct backward reports at x0.
      assert.equal(
        confirm((x) => Math.abs(x - c), x0, -1),
        null,
        `kink at x0 + ${offset}·h`,
      );
    }
  });

  it('does not confirm a right derivative whose central difference is off by truncation (sin 2000x)', () => {
    // (2000·h)²/6 ≈ 2e-5 relative: twenty times the tolerance, from the step alone.
    const f = (x: number): number => Math.sin(2000 * x);
    const x0 = 0.25;
    assert.equal(confirm(f, x0, 2000 * Math.cos(2000 * x0)), null);
  });
});
