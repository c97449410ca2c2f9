// A slow forward and a short time limit: every phase of the engine that calls the forward must
// stop itself before the sandbox's watchdog (settings.timeLimitMs) would kill the check. The
// clock is simulated: each forward call advances it by FORWARD_MS, each clock read by nothing,
// so the test sees exactly how far past the limit the engine would run on a machine where a
// call takes that long, and nothing depends on real speed. The gradients are handbook formulas
// (softmax Jacobian diag(y) − y yᵀ, Petersen & Pedersen, The Matrix Cookbook; d/dx |x| = sign x;
// d/dx x³ = 3x², Abramowitz & Stegun 3.3.1).

import assert from 'node:assert/strict';
import { runCheck } from '../../server/src/engine/check';
import { DEFAULT_SETTINGS } from '../../server/src/engine/settings';
import type { CheckOutcome } from '../../server/src/model/types';
import { functionOp, show, spec } from './opBuilder';

/** Simulated cost of one forward call, ms (the brief's "about 50 ms per call"). */
const FORWARD_MS = 50;

/** A simulated clock the ops' forwards advance. */
function simulatedClock(): { now: () => number; spend: (ms: number) => void } {
  let t = 0;
  return { now: () => t, spend: (ms) => (t += ms) };
}

type Built = ReturnType<typeof functionOp>;

function softmaxOp(n: number, clock: { spend: (ms: number) => void }, wrongAt = -1): Built {
  return functionOp({
    forward: (z: Float64Array) => {
      clock.spend(FORWARD_MS);
      let top = -Infinity;
      for (let i = 0; i < n; i++) top = Math.max(top, z[i]!);
      const y = new Float64Array(n);
      let sum = 0;
      for (let i = 0; i < n; i++) sum += y[i] = Math.exp(z[i]! - top);
      for (let i = 0; i < n; i++) y[i]! /= sum;
      return y;
    },
    backward: (_z: Float64Array, y: Float64Array, dy: Float64Array) => {
      let dot = 0;
      for (let i = 0; i < n; i++) dot += dy[i]! * y[i]!;
      const g = new Float64Array(n);
      for (let i = 0; i < n; i++) g[i] = y[i]! * (dy[i]! - dot);
      if (wrongAt >= 0) g[wrongAt]! *= 1 + 1e-3;
      return g;
    },
    params: [['z', spec('f64', [n], [-2, 2])]],
    backwardArgs: ['z', '$y', '$dy'],
  });
}

/** Elementwise |x| with no avoid points: kinks met now and then, grouped estimates. */
function absOp(n: number, clock: { spend: (ms: number) => void }): Built {
  return functionOp({
    forward: (x: Float64Array) => {
      clock.spend(FORWARD_MS);
      return x.map((v) => Math.abs(v));
    },
    backward: (x: Float64Array, dy: Float64Array) => x.map((v, i) => (v >= 0 ? dy[i]! : -dy[i]!)),
    params: [['x', spec('f64', [n], [-1e-6, 1e-6])]],
  });
}

/** Σ x_i³ over n elements, one output: full check, one column per element. */
function cubeSum(n: number, clock: { spend: (ms: number) => void }): Built {
  return functionOp({
    forward: (x: Float64Array) => {
      clock.spend(FORWARD_MS);
      let s = 0;
      for (let i = 0; i < n; i++) s += x[i]! ** 3;
      return s;
    },
    backward: (x: Float64Array) => x.map((v) => 3 * v * v),
    params: [['x', spec('f64', [n])]],
    backwardArgs: ['x'],
  });
}

function run(build: (clock: { spend: (ms: number) => void }) => Built, timeLimitMs: number): { o: CheckOutcome; elapsed: number } {
  const clock = simulatedClock();
  const built = build(clock);
  const o = runCheck(built.exposed, { op: built.op, settings: { ...DEFAULT_SETTINGS, timeLimitMs } }, clock.now);
  return { o, elapsed: clock.now() };
}

describe('engine: a slow forward never outlasts the time limit', function () {
  this.timeout(120_000);

  const cases: [string, (clock: { spend: (ms: number) => void }) => Built][] = [
    ['a correct softmax over 20,000 (dot-product probes)', (c) => softmaxOp(20_000, c)],
    ['a softmax over 20,000 with a wrong element (probes, splitting, refinement)', (c) => softmaxOp(20_000, c, 4321)],
    ['elementwise |x| near its kink (grouped estimates, kink tests, redraws)', (c) => absOp(5_000, c)],
    ['Σ x³ over 300 elements (one column per element)', (c) => cubeSum(300, c)],
  ];
  for (const [label, build] of cases) {
    it(`${label}: stops by itself before the watchdog, at every limit tried`, () => {
      for (const limit of [1500, 3000, 6000, 10_000]) {
        const { o, elapsed } = run(build, limit);
        // The watchdog would kill the check at the limit: the engine must have returned by then.
        assert.ok(elapsed <= limit, `limit ${limit} ms: the engine ran ${elapsed} ms of forward calls (${o.calls.forward} calls): ${show(o)}`);
        assert.notEqual(o.verdict, 'error', `limit ${limit}: ${show(o)}`);
        // A check that did not finish says how far it got (what the CLI fails the run on), unless
        // its inconclusive has another cause (kinks met at every redraw).
        if (o.verdict === 'inconclusive' && !/non-differentiable/.test(o.message)) assert.ok(o.stoppedAtTimeLimit !== undefined, `limit ${limit}: ${show(o)}`);
      }
    });
  }
});
