// Dot-product probes judged against their own numerical error, and adaptive splitting of a
// probed set down to single elements, for parameters whose exact grouping would cost more
// forward calls than probing (a dense W, a softmax over everything). A probe discrepancy is only
// ever a reason to look closer: the verdict comes from single elements, compared against the
// user's tolerance with their own refined estimates (compareElements + refineSuspicious).
//
// A probe of a set S along random signs s_i: the directional derivative ⟨u, J v⟩ with
// v_i = s_i·max(1, |x_i|) on S (zero elsewhere), from Ridders' extrapolation along the line with
// its error estimate (Press et al., Numerical Recipes 3rd ed., §5.7), against ⟨Jᵀu, v⟩ from the
// backward (the adjoint identity, Griewank & Walther, Evaluating Derivatives 2nd ed.). The
// discrepancy D = Σ_{i∈S} e_i·v_i, e = backward − true gradient, is "evidence" only when it is
// PROBE_EVIDENCE_FACTOR times above the probe's error: Ridders' estimate, the output roundoff
// at the initial step, and the roundoff of the sums (IEEE 754 unit roundoff), plus what a
// single element within tolerance could contribute.
//
// Splitting (adaptive group testing: Dorfman, Ann. Math. Statist. 14 (1943) 436–440; binary
// splitting, Hwang, J. Amer. Statist. Assoc. 67 (1972) 605–608): a flagged set is halved; the
// first half is probed with the parent's signs, so its discrepancy and the second half's add up
// to the parent's (the second half's is the difference, no forward call), and no discrepancy is
// lost between the parts; at least one part carries half of it. A part whose discrepancy
// vanishes on both sides is probed again with fresh signs before it is given up (and a given-up
// part makes the parameter inconclusive, never a pass). Sets of LEAF_ELEMENTS or fewer are
// compared element by element.
//
// How a miss is bounded. One wrong element i whose error exceeds the probe's threshold moves
// every probe that holds it by exactly |e_i·v_i|, whatever the signs: it is flagged at the root
// and at every split on its path, so it is found with certainty (as far as the error estimates
// hold). Several wrong elements can cancel in one probe, but only for some signs: conditioned on
// every other sign, flipping the sign of the largest term a_k changes D by 2|a_k|, so when
// |a_k| exceeds the threshold at most one of the two signs hides it — a root probe misses with
// probability at most 1/2, and all ROOT_PROBES independent root probes with at most
// 2^-ROOT_PROBES < 0.01.

import { F64, I32, U8, abs, max, min, sqrt } from './builtins';
import { estimateColumns } from './fullCheck';
import { ElementState, compareElements, type Comparison, type ElementEstimates } from './judge';
import { centralOnLine, rangeLine, slotGeometry, type SlotGeometry } from './lines';
import type { ForwardMap } from './opHarness';
import type { ParamSlot } from './paramSlot';
import { ROUNDOFF_ULPS } from './precision';
import type { RandomSource } from './random';
import { refineSuspicious, type KinkReport } from './refine';
import { RIDDERS_MIN_INITIAL_CENTRAL_STEPS, riddersAdaptive } from './ridders';
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
/** Sets this small are compared element by element (one column costs 2 forward calls, a probe ~6–10). */
export const LEAF_ELEMENTS = 4;
/** Fresh-sign re-probes of a part whose discrepancy vanished on both sides. */
export const LOST_RETRIES = 2;
/** Most probes one parameter's search may run (besides the time limit). */
export const MAX_SPLIT_PROBES = 600;

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

/** What the search found for one parameter. */
export interface SplitResult {
  /** The elements compared one by one, with their estimates and comparison. */
  est: ElementEstimates;
  /** The comparison of those elements (worstProbe: the upstream vector each was compared under). */
  cmp: Comparison;
  /** Confirmed mismatch: position in est, or -1. */
  mismatchPos: number;
  kink: KinkReport | null;
  /** Elements left uncertain after refinement, with the first one's note. */
  uncertain: number;
  uncertainNote: string;
  /** Flagged parts that could not be followed (lost, out of probes or time). */
  unexplored: number;
  /** Root probes run, flagged, and the largest relative discrepancy seen at the root. */
  rootProbes: SetProbe[];
  probes: number;
  /**
   * Smallest relative error of a single element of typical (root-mean-square) size that every
   * root probe flags: max over root probes of threshold / rms. At least the tolerance.
   */
  detectionFloor: number;
}

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

interface Scratch {
  plus: Float64Array;
  minus: Float64Array;
  geo: SlotGeometry;
  /** Σ_j |u_j|·|y0_j| per upstream vector: the output magnitude behind the resolution. */
  magnitude: Float64Array;
}

/** The sums of a range's gradient terms g_i·s_i·max(1, |x_i|): signed, absolute, squared. */
function termSums(geo: SlotGeometry, g: Float64Array, start: number, count: number, signs: Float64Array): { sum: number; s1: number; s2: number } {
  let sum = 0;
  let s1 = 0;
  let s2 = 0;
  const sc = geo.scale;
  for (let q = 0; q < count; q++) {
    const t = g[start + q] * signs[q] * sc[start + q];
    sum += t;
    s1 += t < 0 ? -t : t;
    s2 += t * t;
  }
  return { sum, s1, s2 };
}

/**
 * Probes the elements start … start + count − 1 along signs, for upstream u and backward
 * gradient g. Returns the figures and whether the discrepancy is evidence.
 */
export function probeSet(ctx: SplitContext, sc: Scratch, start: number, count: number, signs: Float64Array, u: Float64Array, g: Float64Array, magnitude: number, tolTermCap: number): SetProbe {
  const line = rangeLine(ctx.h, ctx.slot, sc.geo, start, count, signs);
  const sums = termSums(sc.geo, g, start, count, signs);
  const analytic = sums.sum;
  const rms = sqrt(sums.s2 / count);
  const tolTerm = tolTermOf(ctx, sums.s2, count, tolTermCap);
  const ws = [u];
  // Settled when the numeric error is far below what one typical element wrong by the tolerance adds.
  const target = (PROBE_TARGET_SHARE / TOLERANCE_TERM_SHARE) * tolTerm / PROBE_EVIDENCE_FACTOR;
  const r = riddersAdaptive(
    (step) => centralOnLine(line, ws, step, sc.plus, sc.minus),
    PROBE_INITIAL_SHARE * line.refineStep,
    RIDDERS_MIN_INITIAL_CENTRAL_STEPS * line.centralStep,
    1,
    (_n, e) => e <= target,
  );
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
 * on its whole path, as the miss bound above assumes.
 */
function tolTermOf(ctx: SplitContext, s2: number, count: number, cap: number): number {
  const rms = count > 0 ? sqrt(s2 / count) : 0;
  return min(cap, TOLERANCE_TERM_SHARE * ctx.tol * rms);
}

/**
 * The threshold of evidence of a range whose numeric side has the given error: the numeric
 * error × PROBE_EVIDENCE_FACTOR, the roundoff of the sum ⟨g, v⟩ in float64, the backward's own
 * rounding per element (ANALYTIC_NOISE_SIGMAS standard deviations), and the tolerance term
 * (tolTermOf).
 */
function thresholdOf(ctx: SplitContext, sums: { s1: number; s2: number }, tolTerm: number, numericError: number): number {
  return PROBE_EVIDENCE_FACTOR * numericError + ROUNDOFF_ULPS * UNIT_ROUNDOFF_F64 * sums.s1 + ANALYTIC_NOISE_SIGMAS * ROUNDOFF_ULPS * ctx.uGrad * sqrt(sums.s2) + tolTerm;
}

/** A part of the parameter awaiting a look: its elements, signs and discrepancy. */
interface Part {
  /** The elements start … start + count − 1. */
  start: number;
  count: number;
  signs: Float64Array;
  /** Which upstream vector its probes use. */
  p: number;
  analytic: number;
  numeric: number;
  numericError: number;
  threshold: number;
  /** Its threshold's tolerance term: the cap of its children's. */
  tolTerm: number;
}

/**
 * Searches one parameter: ROOT_PROBES probes over every element (fresh signs, upstream vectors
 * in turn), then splitting of every flagged part down to single elements, stopping at the
 * first confirmed mismatch. `us[p]`/`grads[p]`: upstream vectors and the backward's gradients.
 */
export function splitSearch(ctx: SplitContext, us: Float64Array[], grads: Float64Array[], random: RandomSource): SplitResult {
  const slot = ctx.slot;
  const n = slot.size;
  const m = ctx.y0.length;
  const sc: Scratch = { plus: new F64(m), minus: new F64(m), geo: slotGeometry(slot), magnitude: new F64(us.length) };
  for (let p = 0; p < us.length; p++) {
    let s = 0;
    for (let j = 0; j < m; j++) s += abs(us[p][j]) * abs(ctx.y0[j]);
    sc.magnitude[p] = s;
  }
  const result: SplitResult = {
    est: { indices: [], numeric: [new F64(0)], bound: [new F64(0)] },
    cmp: { excess: new F64(0), worstProbe: new I32(0), rel: new F64(0), state: new U8(0), floors: new F64(us.length) },
    mismatchPos: -1,
    kink: null,
    uncertain: 0,
    uncertainNote: '',
    unexplored: 0,
    rootProbes: [],
    probes: 0,
    detectionFloor: ctx.tol,
  };
  // Elements compared one by one, per upstream vector they were flagged under.
  const leafIdx: number[] = [];
  const leafP: number[] = [];
  const leafNum: number[] = [];
  const leafBound: number[] = [];
  const leafState: number[] = [];
  const leafRel: number[] = [];
  const leafExcess: number[] = [];

  const stack: Part[] = [];
  for (let q = 0; q < ROOT_PROBES; q++) {
    if (ctx.outOfTime()) break;
    const p = q % us.length;
    const signs = fillSigns(random, n);
    const probe = probeSet(ctx, sc, 0, n, signs, us[p], grads[p], sc.magnitude[p], Infinity);
    result.probes++;
    result.rootProbes[result.rootProbes.length] = probe;
    if (probe.unresolved) result.unexplored++;
    if (probe.flagged) stack[stack.length] = partOf(0, n, signs, p, probe);
  }
  let floorRel = ctx.tol;
  for (let q = 0; q < result.rootProbes.length; q++) {
    const rp = result.rootProbes[q];
    if (rp.rms > 0) floorRel = max(floorRel, rp.threshold / rp.rms);
    else if (!rp.unresolved) floorRel = max(floorRel, ctx.tol);
  }
  result.detectionFloor = result.rootProbes.length < ROOT_PROBES ? Infinity : floorRel;

  // Depth first, so a single wrong element is reached after about log2(n) probes.
  while (stack.length > 0 && result.mismatchPos < 0) {
    const part = stack[stack.length - 1];
    stack.length = stack.length - 1;
    if (part.count <= LEAF_ELEMENTS) {
      compareLeaves(ctx, us, grads, part, result, { leafIdx, leafP, leafNum, leafBound, leafState, leafRel, leafExcess });
      continue;
    }
    if (result.probes >= MAX_SPLIT_PROBES || ctx.outOfTime()) {
      result.unexplored += 1 + stack.length;
      break;
    }
    const children = splitPart(ctx, sc, us, grads, part, random, result);
    if (children === null) {
      result.unexplored++;
      continue;
    }
    // Push the smaller discrepancy first so the larger is followed first.
    for (let c = children.length - 1; c >= 0; c--) stack[stack.length] = children[c];
  }

  const count = leafIdx.length;
  const idx = new I32(count);
  const K = us.length;
  const numeric: Float64Array[] = [];
  const bound: Float64Array[] = [];
  for (let k = 0; k < K; k++) {
    numeric[k] = new F64(count);
    bound[k] = new F64(count);
  }
  const cmp: Comparison = { excess: new F64(count), worstProbe: new I32(count), rel: new F64(count), state: new U8(count), floors: new F64(K) };
  for (let k = 0; k < K; k++) cmp.floors[k] = ctx.floorOf(k);
  for (let q = 0; q < count; q++) {
    idx[q] = leafIdx[q];
    // Each element was compared under one upstream vector; the others' rows hold the same figures.
    for (let k = 0; k < K; k++) {
      numeric[k][q] = k === leafP[q] ? leafNum[q] : grads[k][leafIdx[q]];
      bound[k][q] = k === leafP[q] ? leafBound[q] : 0;
    }
    cmp.state[q] = leafState[q];
    cmp.rel[q] = leafRel[q];
    cmp.excess[q] = leafExcess[q];
    cmp.worstProbe[q] = leafP[q];
  }
  result.est = { indices: idx, numeric, bound };
  result.cmp = cmp;
  return result;
}

/** Random ±1 signs, 32 from each draw of the generator (its values carry at least 32 random bits). */
function fillSigns(random: RandomSource, count: number): Float64Array {
  const s = new F64(count);
  let bits = 0;
  for (let i = 0; i < count; i++) {
    if ((i & 31) === 0) bits = (random() * 4294967296) >>> 0;
    s[i] = (bits >>> (i & 31)) & 1 ? 1 : -1;
  }
  return s;
}

// A plain loop, not a typed-array method: the op's module may have replaced those.
function copySigns(src: Float64Array, a: number, b: number): Float64Array {
  const out = new F64(b - a);
  for (let i = a; i < b; i++) out[i - a] = src[i];
  return out;
}

function partOf(start: number, count: number, signs: Float64Array, p: number, probe: SetProbe): Part {
  return { start, count, signs, p, analytic: probe.analytic, numeric: probe.numeric, numericError: probe.numericError, threshold: probe.threshold, tolTerm: probe.tolTerm };
}

/**
 * Halves a flagged part: probes the first half with the parent's signs and takes the second
 * half's discrepancy as the difference. Returns the flagged halves, or null when neither shows
 * evidence even after LOST_RETRIES fresh-sign probes of both.
 */
function splitPart(ctx: SplitContext, sc: Scratch, us: Float64Array[], grads: Float64Array[], part: Part, random: RandomSource, result: SplitResult): Part[] | null {
  const count = part.count;
  const half = count >> 1;
  const aStart = part.start;
  const bStart = part.start + half;
  const bCount = count - half;
  const aSigns = copySigns(part.signs, 0, half);
  const bSigns = copySigns(part.signs, half, count);
  const u = us[part.p];
  const g = grads[part.p];
  const mag = sc.magnitude[part.p];
  const a = probeSet(ctx, sc, aStart, half, aSigns, u, g, mag, part.tolTerm);
  result.probes++;
  const out: Part[] = [];
  // The second half, inferred: its discrepancy is the parent's minus the first half's.
  const bAnalytic = part.analytic - a.analytic;
  const bNumeric = part.numeric - a.numeric;
  const bError = part.numericError + a.numericError;
  const bSums = termSums(sc.geo, g, bStart, bCount, bSigns);
  const bTolTerm = tolTermOf(ctx, bSums.s2, bCount, part.tolTerm);
  const bThreshold = thresholdOf(ctx, bSums, bTolTerm, bError);
  const aFlag = a.flagged;
  const bFlag = !a.unresolved && abs(bAnalytic - bNumeric) > bThreshold;
  const gapA = abs(a.analytic - a.numeric);
  const gapB = abs(bAnalytic - bNumeric);
  const aPart: Part = partOf(aStart, half, aSigns, part.p, a);
  const bPart: Part = { start: bStart, count: bCount, signs: bSigns, p: part.p, analytic: bAnalytic, numeric: bNumeric, numericError: bError, threshold: bThreshold, tolTerm: bTolTerm };
  if (aFlag && bFlag) return gapA >= gapB ? [aPart, bPart] : [bPart, aPart];
  if (aFlag) return [aPart];
  if (bFlag) {
    // Probe it for real when the inferred figures are borderline: the child must carry its own evidence.
    return [bPart];
  }
  // Neither half shows the parent's discrepancy: fresh signs on both before giving up.
  for (let r = 0; r < LOST_RETRIES; r++) {
    if (result.probes >= MAX_SPLIT_PROBES || ctx.outOfTime()) return null;
    for (let side = 0; side < 2; side++) {
      const start = side === 0 ? aStart : bStart;
      const size = side === 0 ? half : bCount;
      const signs = fillSigns(random, size);
      const probe = probeSet(ctx, sc, start, size, signs, u, g, mag, part.tolTerm);
      result.probes++;
      if (probe.flagged) out[out.length] = partOf(start, size, signs, part.p, probe);
    }
    if (out.length > 0) return out;
  }
  return null;
}

/**
 * The ordinary per-element verdict for the elements of a small flagged part: a central
 * difference per element, compared against the tolerance, and Ridders' refinement with the kink
 * test for the suspicious ones (refine.ts). The zero level is the parameter's, not the part's.
 */
function compareLeaves(
  ctx: SplitContext,
  us: Float64Array[],
  grads: Float64Array[],
  part: Part,
  result: SplitResult,
  leaves: { leafIdx: number[]; leafP: number[]; leafNum: number[]; leafBound: number[]; leafState: number[]; leafRel: number[]; leafExcess: number[] },
): void {
  const { leafIdx, leafP, leafNum, leafBound, leafState, leafRel, leafExcess } = leaves;
  const ws = [us[part.p]];
  const analytic = [grads[part.p]];
  const indices = new I32(part.count);
  for (let q = 0; q < part.count; q++) indices[q] = part.start + q;
  const est = estimateColumns(ctx.h, ctx.slot, indices, ws, ctx.uOut, ctx.outOfTime);
  const floors = new F64(1);
  floors[0] = ctx.floorOf(part.p);
  const cmp = compareElements(analytic, est, ctx.tol, floors);
  markUnresolved(analytic[0], est, cmp, part.start, ctx.tol);
  const refine = refineSuspicious(ctx.h, ctx.slot, analytic, est, cmp, ws, ctx.y0, ctx.uOut, ctx.tol, ctx.outOfTime, false);
  for (let q = 0; q < part.count; q++) {
    const pos = leafIdx.length;
    leafIdx[pos] = indices[q];
    leafP[pos] = part.p;
    leafNum[pos] = est.numeric[0][q];
    leafBound[pos] = est.bound[0][q];
    leafState[pos] = cmp.state[q];
    leafRel[pos] = cmp.rel[q];
    leafExcess[pos] = cmp.excess[q];
    if (cmp.state[q] === ElementState.mismatch && result.mismatchPos < 0) result.mismatchPos = pos;
  }
  if (refine.kink !== null && result.kink === null) result.kink = refine.kink;
  result.uncertain += refine.uncertain + refine.unrefined;
  if (result.uncertainNote === '' && refine.uncertainNote !== '') result.uncertainNote = refine.uncertainNote;
}

/**
 * The part was flagged, so some element in it is wrong unless the probe erred: an element whose
 * single central difference cannot resolve it to the tolerance (its bound above tolerance × its
 * scale, e.g. the outputs' rounding over a whole softmax) is refined like a suspicious one, so
 * Ridders' larger steps resolve it, or it ends uncertain (inconclusive), never a silent pass.
 * (Seen: softmax over 100,000, seed 5020, an element wrong by 1e-4 hidden under its bound.)
 */
function markUnresolved(g: Float64Array, est: ElementEstimates, cmp: Comparison, start: number, tol: number): void {
  const n = est.numeric[0];
  const b = est.bound[0];
  const floor = cmp.floors[0];
  for (let q = 0; q < cmp.state.length; q++) {
    if (cmp.state[q] !== ElementState.ok) continue;
    const scale = max(abs(g[start + q]), abs(n[q]), floor);
    if (b[q] > tol * scale) cmp.state[q] = ElementState.suspicious;
  }
}

/** One line for the report: what the probes saw, for a message or a note. */
export function describeSearch(slot: ParamSlot, r: SplitResult): string {
  let flagged = 0;
  for (let q = 0; q < r.rootProbes.length; q++) if (r.rootProbes[q].flagged) flagged++;
  if (r.unexplored > 0) {
    return `'${slot.name}': ${flagged} of ${r.rootProbes.length} dot-product probes disagree with the backward beyond their own error, but the search could not narrow it to single elements within the limits (${r.probes} probes)`;
  }
  return `'${slot.name}': ${flagged} of ${r.rootProbes.length} dot-product probes flagged; ${r.est.indices.length} element${r.est.indices.length === 1 ? '' : 's'} compared one by one`;
}

