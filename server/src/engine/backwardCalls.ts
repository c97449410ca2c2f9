// The backward side of one @backward attempt: the upstream vectors `$dy` (K for the full and
// grouped checks, P for dot-product probes, the K among them) and the backward's gradients for
// each, called with the instance state a method's forward left behind.

import { F64, max, min } from './builtins';
import { fail } from './failure';
import type { InstanceSnapshot } from './instanceState';
import type { Baseline } from './kindBaseline';
import type { OpHarness } from './opHarness';
import { fillSigned, type RandomSource } from './random';
import type { CheckSettings } from './settings';
import type { CheckMethod } from '../model/types';

/** The upstream vectors of one attempt and the backward's gradients for them. */
export interface UpstreamProbes {
  /** Upstream vectors of the full/grouped checks (K of them). */
  ws: Float64Array[];
  /** analytic[s][k]: gradient of slot s for upstream vector k. */
  analytic: Float64Array[][];
  /** Upstream vectors of the dot-product probes (none when no parameter is probed): the K first, then fresh draws. */
  dotUs: Float64Array[];
  /** dotGrads[s][p]: gradient of slot s for dot-product upstream vector p. */
  dotGrads: Float64Array[][];
}

/** Calls the backward at the sample point for an upstream vector; returns one gradient per slot. */
export type BackwardCaller = (w: Float64Array) => Float64Array[];

/**
 * A caller of the backward at the baseline's sample point. A method's backward may read state its
 * forward cached, and the structure probes have run the forward at moved points since: the caller
 * runs it at the sample point once, keeps the instance as it left it, and puts that state back
 * after every backward call (a layer's backward may accumulate into its fields:
 * `this.gradW[k] += ...`). Every call is checked for changed inputs.
 */
export function backwardCaller(h: OpHarness, base: Baseline): BackwardCaller {
  const slots = base.slots;
  const scratch = new F64(base.y0.length);
  let instanceState: InstanceSnapshot | null = null;
  return (w) => {
    const into: Float64Array[] = [];
    for (let s = 0; s < slots.length; s++) into[s] = new F64(slots[s].size);
    if (h.renewsInstance) {
      // State in `#private` fields cannot be snapshot: a fresh instance and forward per call.
      h.prepareFreshInstanceForBackward(scratch);
    } else if (h.backwardNeedsFreshForward && instanceState === null) {
      h.forwardInto(scratch, true);
      instanceState = h.snapshotInstance();
    } else if (instanceState !== null) {
      // Forward calls at moved points may have run since (a late call, e.g. for output hints).
      instanceState.restore();
    }
    h.backwardInto(h.takesUpstream ? w : null, base.y0, slots, into);
    const changed = base.guard.firstChange(h.inputValues());
    if (changed !== null) fail(`backward changed its input ${changed}`);
    if (instanceState !== null) instanceState.restore();
    return into;
  };
}

/** `count` upstream vectors, uniform in [-1, 1], or all ones when the backward takes no `$dy`. */
function drawUpstream(h: OpHarness, m: number, count: number, random: RandomSource): Float64Array[] {
  const out: Float64Array[] = [];
  for (let k = 0; k < count; k++) {
    const w = new F64(m);
    if (h.takesUpstream) fillSigned(random, w);
    else for (let j = 0; j < m; j++) w[j] = 1;
    out[k] = w;
  }
  return out;
}

/**
 * Draws the upstream vectors (K, then the dot-product probes' beyond the K they share when a
 * parameter is probed) from one stream and calls the backward once for each distinct vector.
 * Without `$dy` one call serves every probe.
 */
export function callUpstreamProbes(
  h: OpHarness,
  base: Baseline,
  settings: CheckSettings,
  methods: CheckMethod[],
  random: RandomSource,
  callBackward: BackwardCaller,
): UpstreamProbes {
  const slots = base.slots;
  const m = base.y0.length;
  const ws = drawUpstream(h, m, h.takesUpstream ? max(1, settings.upstreamProbes) : 1, random);
  let needsDot = false;
  for (let s = 0; s < slots.length; s++) if (methods[s] === 'dot-product') needsDot = true;
  // The probes take the K vectors first and draw only the rest: every vector is an independent
  // uniform draw either way, and each one shared saves a backward call with its input guard and
  // gradient read (measured: softmax over 1,000,000, 6 backward calls per check before, 4 after).
  const dotCount = needsDot ? max(1, settings.dotProductProbes) : 0;
  const shared = min(ws.length, dotCount);
  const dotUs: Float64Array[] = [];
  for (let p = 0; p < shared; p++) dotUs[p] = ws[p];
  const fresh = drawUpstream(h, m, dotCount - shared, random);
  for (let p = 0; p < fresh.length; p++) dotUs[shared + p] = fresh[p];
  const analytic: Float64Array[][] = [];
  const dotGrads: Float64Array[][] = [];
  for (let s = 0; s < slots.length; s++) {
    analytic[s] = [];
    dotGrads[s] = [];
  }
  for (let k = 0; k < ws.length; k++) {
    const grads = callBackward(ws[k]);
    for (let s = 0; s < slots.length; s++) analytic[s][k] = grads[s];
  }
  for (let p = 0; p < dotUs.length; p++) {
    const grads = p < shared ? null : h.takesUpstream ? callBackward(dotUs[p]) : null;
    for (let s = 0; s < slots.length; s++) dotGrads[s][p] = grads !== null ? grads[s] : analytic[s][p < shared ? p : 0];
  }
  return { ws, analytic, dotUs, dotGrads };
}
