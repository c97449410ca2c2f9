// One dot-product probe of a contiguous set of a parameter's elements, judged against its own
// numerical error: the error model behind splitSearch.ts. A probe of a set S along random signs
// s_i: the directional derivative ⟨u, J v⟩ with v_i = s_i·max(1, |x_i|) on S (zero elsewhere),
// from Ridders' extrapolation along the line with its error estimate (Press et al., Numerical
// Recipes 3rd ed., §5.7), against ⟨Jᵀu, v⟩ from the backward (the adjoint identity, Griewank &
// Walther, Evaluating Derivatives 2nd ed.). The discrepancy D = Σ_{i∈S} e_i·v_i, e = backward −
// true gradient, is "evidence" only when it is PROBE_EVIDENCE_FACTOR times above the probe's
// error: Ridders' estimate, the output roundoff at the initial step, and the roundoff of the sums
// (IEEE 754 unit roundoff), plus what a single element within tolerance could contribute.

import { F64, abs, max, min, sqrt } from './builtins';
import { centralProjection, rangeLine, type SlotGeometry } from './lines';
import type { ForwardMap } from './forwardMap';
import type { ParamSlot } from './paramSlot';
import { ROUNDOFF_ULPS } from './precision';
import { RIDDERS_MIN_INITIAL_CENTRAL_STEPS, riddersAdaptive, type AdaptiveRiddersResult } from './ridders';
import { UNIT_ROUNDOFF_F64 } from './settings';

/**
 * Root probes per parameter, each along fresh random signs (spread over the upstream vectors):
 * with several wrong elements each misses with probability ≤ 1/2, so 7 give ≤ 2^-7 ≈ 0.0078,
 * below the 0.01 the detection floor promises.
 */
export const ROOT_PROBES = 7;
/**
 * A discrepancy counts as evidence above this many times the probe's own error (Ridders'
 * estimate and roundoff). Ridders' estimate is about the size of the error itself (Numerical
 * Recipes §5.7); 4 leaves room for an estimate off by that much (our choice).
 */
export const PROBE_EVIDENCE_FACTOR = 4;
/**
 * The backward's own rounding, per element: ROUNDOFF_ULPS ulps of the gradient's precision,
 * taken as independent between elements, allowed up to this many standard deviations of their
 * sum over a set (our choice: 6σ, so a correct backward's rounding in a million-element float32
 * gradient never looks like a wrong element).
 */
export const ANALYTIC_NOISE_SIGMAS = 6;
/**
 * Ridders' extrapolation of a probe continues until its error estimate is below this share of
 * what one typical element wrong by the tolerance would add (÷ PROBE_EVIDENCE_FACTOR): the
 * numeric error then stays far below the tolerance term of the threshold, and an element much
 * smaller than the typical one is still seen (our choice: 1/10, as TOLERANCE_TERM_SHARE).
 */
export const PROBE_TARGET_SHARE = 0.1;
/**
 * A probe's first Ridders step, as a share of RIDDERS_INITIAL_STEP: a whole parameter moving at
 * once curves the output sooner than one element does, and a smaller first step needs fewer
 * tableau columns to reach the target, while the outputs' roundoff at it stays far below the
 * target (our choice, measured on the benchmark's softmax over 100,000: 1/16 took 45 forward calls for a pass where 1 took 59).
 */
export const PROBE_INITIAL_SHARE = 0.0625;
/**
 * Share of "one typical element wrong by the tolerance" kept in the threshold: discrepancies
 * below it are not worth a search (our choice: 1/10). Smaller than the whole tolerance term so an
 * element a hundred times below the typical size, wrong by 1e-4, still shows (the benchmark's
 * y = W x puts the seeded bug on such elements now and then); the backward's rounding has its
 * own term (ANALYTIC_NOISE_SIGMAS).
 */
export const TOLERANCE_TERM_SHARE = 0.1;
/** One probe of a set: the two sides, the threshold of evidence, the set's typical term. */
export interface SetProbe {
  analytic: number;
  numeric: number;
  /** |analytic − numeric| above this is evidence of a wrong element (absolute). */
  threshold: number;
  /** Root mean square of |g_i·v_i| over the set: the term of a typical element. */
  rms: number;
  /** Number of elements in the set. */
  count: number;
  /** The numeric side's error (PROBE_EVIDENCE_FACTOR × it is part of the threshold). */
  numericError: number;
  /** The threshold's tolerance term (absolute): TOLERANCE_TERM_SHARE × tol × rms, capped by the parent's. */
  tolTerm: number;
  flagged: boolean;
  /** The numeric side could not be estimated (not finite along the line). */
  unresolved: boolean;
}

/** What a probe needs of the check: the op, the parameter, the baseline and the limits. */
export interface SplitContext {
  h: ForwardMap;
  slot: ParamSlot;
  y0: Float64Array;
  /** Unit roundoff of the outputs, and of the gradient the backward returned. */
  uOut: number;
  uGrad: number;
  tol: number;
  /** Zero level of gradient values (relative floor × the parameter's largest), per upstream vector. */
  floorOf: (p: number) => number;
  outOfTime: () => boolean;
}

/** Buffers and per-parameter figures every probe of one search reuses. */
export interface Scratch {
  plus: Float64Array;
  minus: Float64Array;
  geo: SlotGeometry;
  /** Σ_j |u_j|·|y0_j| per upstream vector: the output magnitude behind the resolution. */
  magnitude: Float64Array;
}

/**
 * The sums of a range's gradient terms g_i·v_i (v = dir[at …], signed scales: lines.ts
 * signedScales): signed, absolute, squared.
 */
export function termSums(g: Float64Array, start: number, count: number, dir: Float64Array, at: number): { sum: number; s1: number; s2: number } {
  let sum = 0;
  let s1 = 0;
  let s2 = 0;
  for (let q = 0; q < count; q++) {
    const t = g[start + q] * dir[at + q];
    sum += t;
    // abs, not a branch: the signs are random, so a branch mispredicts half the time (measured:
    // this loop over a million terms took 7–12 ms with the branch, 2–5 ms without).
    s1 += abs(t);
    s2 += t * t;
  }
  return { sum, s1, s2 };
}

/**
 * Probes the elements start … start + count − 1 along dir[at …], for upstream u and backward
 * gradient g, with a tolerance term of at most tolTermCap. Returns the figures and whether the
 * discrepancy is evidence.
 */
export function probeSet(
  ctx: SplitContext,
  sc: Scratch,
  start: number,
  count: number,
  dir: Float64Array,
  at: number,
  u: Float64Array,
  g: Float64Array,
  magnitude: number,
  tolTermCap: number,
): SetProbe {
  const line = rangeLine(ctx.h, ctx.slot, sc.geo, start, count, dir, at);
  const sums = termSums(g, start, count, dir, at);
  const analytic = sums.sum;
  const rms = sqrt(sums.s2 / count);
  const tolTerm = tolTermOf(ctx, sums.s2, count, tolTermCap);
  // Settled when the numeric error is far below what one typical element wrong by the tolerance
  // adds, or below the outputs' rounding at the initial step: the error taken is never below
  // that resolution, so further columns would cost forward calls and change nothing (measured:
  // softmax over 1,000,000, 57 forward calls for a pass before, 33 after).
  const target = ((PROBE_TARGET_SHARE / TOLERANCE_TERM_SHARE) * tolTerm) / PROBE_EVIDENCE_FACTOR;
  const h0 = PROBE_INITIAL_SHARE * line.refineStep;
  const enough = max(target, (ROUNDOFF_ULPS * ctx.uOut * magnitude) / h0);
  const col = new F64(1);
  const central = (step: number): Float64Array | null => {
    line.pairAt(step, sc.plus, sc.minus);
    col[0] = centralProjection(u, sc.plus, sc.minus, step);
    return col[0] === col[0] ? col : null;
  };
  let r: AdaptiveRiddersResult;
  try {
    r = riddersAdaptive(central, h0, RIDDERS_MIN_INITIAL_CENTRAL_STEPS * line.centralStep, 1, (_n, e) => e <= enough);
  } finally {
    line.restore();
  }
  // Outputs whose change stays below their rounding hide it: the resolution at the initial step.
  const resolution = (ROUNDOFF_ULPS * ctx.uOut * magnitude) / r.initialStep[0];
  const numericError = max(r.error[0], resolution);
  const threshold = thresholdOf(ctx, sums, tolTerm, numericError);
  const unresolved = !(numericError < Infinity);
  const flagged = !unresolved && abs(analytic - r.value[0]) > threshold;
  return { analytic, numeric: r.value[0], threshold, rms, count, numericError, tolTerm, flagged, unresolved };
}

/**
 * TOLERANCE_TERM_SHARE of what one element of the set's typical size wrong by the tolerance
 * would add, never above the parent's (cap): a part's root-mean-square term can exceed its
 * parent's by chance, and a threshold that grew along the path of a wrong element would drop a
 * discrepancy its parent had flagged (seen: a softmax element just above the floor lost at 312
 * of 20,000 elements). With the cap, a single wrong element flagged at the root stays flagged
 * on its whole path, as the miss bound (splitSearch.ts) assumes.
 */
export function tolTermOf(ctx: SplitContext, s2: number, count: number, cap: number): number {
  const rms = count > 0 ? sqrt(s2 / count) : 0;
  return min(cap, TOLERANCE_TERM_SHARE * ctx.tol * rms);
}

/**
 * The threshold of evidence of a range whose numeric side has the given error: the numeric
 * error × PROBE_EVIDENCE_FACTOR, the roundoff of the sum ⟨g, v⟩ in float64, the backward's own
 * rounding per element (ANALYTIC_NOISE_SIGMAS standard deviations), and the tolerance term
 * (tolTermOf).
 */
export function thresholdOf(ctx: SplitContext, sums: { s1: number; s2: number }, tolTerm: number, numericError: number): number {
  return PROBE_EVIDENCE_FACTOR * numericError + ROUNDOFF_ULPS * UNIT_ROUNDOFF_F64 * sums.s1 + ANALYTIC_NOISE_SIGMAS * ROUNDOFF_ULPS * ctx.uGrad * sqrt(sums.s2) + tolTerm;
}
