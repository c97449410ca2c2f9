// The evaluation floor of a check: exactly the forward and backward calls its method needs,
// timed directly on the same compiled functions in a context like the runner's, with nothing
// else in the loop (no perturbation bookkeeping, no comparison, no messages).
import type { DirectOp } from './directOp';

/** Calls a check method needs: forward calls and backward calls. */
export interface CallBudget {
  forwards: number;
  backwards: number;
}

/**
 * Longest floor, in ms, that is run call for call; above it the floor is the call count times
 * the median time of one call (the calls are independent and alike, so this is the same figure
 * without spending minutes on it).
 */
export const FLOOR_FULL_RUN_MS = 3000;

/** Calls timed one by one to learn the time of one call. */
const SINGLE_CALL_SAMPLES = 7;

export interface FloorTiming {
  medianMs: number;
  /** Median time of one forward and of one backward call, in ms. */
  forwardMs: number;
  backwardMs: number;
  /** True when the floor is count × per-call time rather than a timed run of every call. */
  fromPerCall: boolean;
}

function upstream(d: DirectOp): Float64Array {
  const dy = new (d.params[0].constructor as Float64ArrayConstructor)(d.outputs);
  for (let j = 0; j < dy.length; j++) dy[j] = ((j * 7919) % 2003) / 1001.5 - 1;
  return dy;
}

function timeEach(call: () => void, samples: number): number {
  const times: number[] = [];
  for (let s = 0; s < samples; s++) {
    const t = performance.now();
    call();
    times.push(performance.now() - t);
  }
  return median(times);
}

/** Median wall time, in ms, of `reps` runs of the budget's calls (after warm-up calls). */
export function timeFloor(d: DirectOp, budget: CallBudget, reps: number): FloorTiming {
  const dy = upstream(d);
  // Warm-up, then one call at a time: what a single call costs once compiled.
  const forwardMs = timeEach(() => d.forward(), SINGLE_CALL_SAMPLES);
  const backwardMs = timeEach(() => d.backward(dy), SINGLE_CALL_SAMPLES);
  const estimate = budget.forwards * forwardMs + budget.backwards * backwardMs;
  if (estimate > FLOOR_FULL_RUN_MS) return { medianMs: estimate, forwardMs, backwardMs, fromPerCall: true };
  const runs: number[] = [];
  for (let r = 0; r < reps; r++) {
    const t = performance.now();
    for (let f = 0; f < budget.forwards; f++) d.forward();
    for (let b = 0; b < budget.backwards; b++) d.backward(dy);
    runs.push(performance.now() - t);
  }
  return { medianMs: median(runs), forwardMs, backwardMs, fromPerCall: false };
}

export function median(xs: number[]): number {
  if (xs.length === 0) return NaN;
  const s = [...xs].sort((a, b) => a - b);
  const mid = s.length >> 1;
  return s.length % 2 ? s[mid] : (s[mid - 1] + s[mid]) / 2;
}
