// The evaluation floor of a check: exactly the forward and backward calls its method needs,
// timed directly on the same compiled functions in a context like the runner's, with nothing
// else in the loop (no perturbation bookkeeping, no comparison, no messages).
import type { DirectOp } from './directOp';

/** Calls a check method needs: forward calls and backward calls. */
export interface CallBudget {
  forwards: number;
  backwards: number;
}

/** Median wall time, in ms, of `reps` runs of the budget's calls (after one untimed run). */
export function timeFloor(d: DirectOp, budget: CallBudget, reps: number): { medianMs: number; runsMs: number[] } {
  const dy = new (d.params[0].constructor as Float64ArrayConstructor)(d.outputs);
  for (let j = 0; j < dy.length; j++) dy[j] = ((j * 7919) % 2003) / 1001.5 - 1;
  const once = (): void => {
    for (let f = 0; f < budget.forwards; f++) d.forward();
    for (let b = 0; b < budget.backwards; b++) d.backward(dy);
  };
  once();
  const runs: number[] = [];
  for (let r = 0; r < reps; r++) {
    const t = performance.now();
    once();
    runs.push(performance.now() - t);
  }
  return { medianMs: median(runs), runsMs: runs };
}

export function median(xs: number[]): number {
  if (xs.length === 0) return NaN;
  const s = [...xs].sort((a, b) => a - b);
  const mid = s.length >> 1;
  return s.length % 2 ? s[mid] : (s[mid - 1] + s[mid]) / 2;
}
