// The gradient check a practitioner writes by hand: project the output onto a fixed random
// vector w to get a scalar L = Σ w_j y_j, then for every element a central difference
// (L(x + h e_i) − L(x − h e_i)) / 2h with one fixed step and no refinement, compared with the
// backward's gradient for upstream w. The benchmark times it as the baseline to beat.
import type { DirectOp } from './directOp';

/**
 * Fixed step of the hand-written loop, absolute units of x: 1e-6 is the value most often
 * written in such loops (common practice, from memory; not from a handbook).
 */
export const HAND_LOOP_STEP = 1e-6;

export interface HandLoopResult {
  /** Elements whose central difference was computed and timed. */
  elementsTimed: number;
  elements: number;
  /** Time of the timed elements, in ms. */
  timedMs: number;
  /** Time for every element: measured when all were timed, else the loop's time scaled up linearly. */
  totalMs: number;
  extrapolated: boolean;
  /** Largest |numeric − analytic| / max(|numeric|, |analytic|, 1e-300) over the timed elements. */
  maxRelError: number;
  /** Complete runs whose median totalMs is (1 when the loop was extrapolated or ran once). */
  runs?: number;
}

/**
 * Runs the loop up to `maxRuns` times while each run covers every element and their sum stays
 * within `budgetMs`, and reports the run with the median total: one timing of a loop of a few
 * milliseconds moves by 2–4× with the machine's load (seen on this machine, session 5), so a
 * single run is no baseline. A loop that needed extrapolation runs once.
 */
export function runHandLoopMedian(d: DirectOp, budgetMs: number, minElements: number, maxRuns: number): HandLoopResult {
  const runs: HandLoopResult[] = [runHandLoop(d, budgetMs, minElements)];
  let spent = runs[0].timedMs;
  while (runs.length < maxRuns && !runs[0].extrapolated && spent + runs[0].timedMs <= budgetMs) {
    const r = runHandLoop(d, budgetMs, minElements);
    if (r.extrapolated) break;
    runs.push(r);
    spent += r.timedMs;
  }
  const sorted = [...runs].sort((a, b) => a.totalMs - b.totalMs);
  return { ...sorted[(sorted.length - 1) >> 1], runs: runs.length };
}

/**
 * Runs the loop over every parameter's elements in order until `budgetMs` is spent (at least
 * `minElements` elements); the backward's one call and the first forward are included.
 */
export function runHandLoop(d: DirectOp, budgetMs: number, minElements: number): HandLoopResult {
  const h = HAND_LOOP_STEP;
  const w = new Float64Array(d.outputs);
  for (let j = 0; j < w.length; j++) w[j] = ((j * 104729) % 4099) / 2049.5 - 1;
  const wIn = new (d.params[0].constructor as Float64ArrayConstructor)(d.outputs);
  wIn.set(w);
  const loss = (): number => {
    const y = d.forward();
    let s = 0;
    for (let j = 0; j < y.length; j++) s += w[j] * y[j];
    return s;
  };
  const elements = d.params.reduce((a, p) => a + p.length, 0);
  const started = performance.now();
  loss();
  const grads = d.backward(wIn);
  const setupMs = performance.now() - started;
  let timed = 0;
  let maxRel = 0;
  let stop = false;
  for (let p = 0; p < d.params.length && !stop; p++) {
    const x = d.params[p];
    const g = grads[p];
    for (let i = 0; i < x.length; i++) {
      const x0 = x[i];
      x[i] = x0 + h;
      const lp = loss();
      x[i] = x0 - h;
      const lm = loss();
      x[i] = x0;
      const numeric = (lp - lm) / (2 * h);
      const rel = Math.abs(numeric - g[i]) / Math.max(Math.abs(numeric), Math.abs(g[i]), 1e-300);
      if (rel > maxRel) maxRel = rel;
      timed++;
      if (timed >= minElements && (timed & 15) === 0 && performance.now() - started > budgetMs) {
        stop = true;
        break;
      }
    }
  }
  const timedMs = performance.now() - started;
  const extrapolated = timed < elements;
  // Scaled up: the one forward and backward once, the per-element loop in proportion.
  const totalMs = extrapolated ? setupMs + ((timedMs - setupMs) * elements) / timed : timedMs;
  return { elementsTimed: timed, elements, timedMs, totalMs, extrapolated, maxRelError: maxRel };
}
