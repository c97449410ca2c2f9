// Result assembly of one parameter of a @backward check: the figures (largest errors, the worst
// element), the verdict and its note from the comparison and refinement, and the evidence the
// hints and the report data read later.

import { abs, copyList, formatNumber, max } from './builtins';
import type { ParamEvidence } from './hints';
import { ElementState, type Comparison, type ElementEstimates } from './judge';
import { elementName, unravelSlot, type ParamSlot } from './paramSlot';
import type { KinkReport, RefineSummary } from './refine';
import type { CheckMethod, ParamResult, TimeLimitStop, Verdict } from '../model/types';

/** One parameter's check: its result and what the report and the hints still need. */
export interface ParamCheck {
  result: ParamResult;
  evidence: ParamEvidence | null;
  kink: KinkReport | null;
  note: string;
  /** Position (in the estimates) of the worst element, -1 when none was compared. */
  worstPos: number;
  /** Set when the time limit left suspicious elements of this parameter unrefined. */
  timeStop?: Omit<TimeLimitStop, 'timeLimitMs'>;
}

export function summarise(
  slot: ParamSlot,
  tol: number,
  method: CheckMethod,
  analytic: Float64Array[],
  est: ElementEstimates,
  cmp: Comparison,
  refine: RefineSummary,
  complete: boolean,
): ParamCheck {
  let maxAbs = 0;
  let maxRel = 0;
  let worstPos = -1;
  let worstPriority = -1;
  for (let p = 0; p < est.indices.length; p++) {
    const i = est.indices[p];
    for (let k = 0; k < analytic.length; k++) maxAbs = max(maxAbs, abs(analytic[k][i] - est.numeric[k][p]));
    // The worst element is a confirmed mismatch when there is one, then the largest relative error.
    const state = cmp.state[p];
    const priority = state === ElementState.mismatch ? 2 : state === ElementState.suspicious || state === ElementState.uncertain ? 1 : 0;
    // One rule for the worst element (model/types.ts WorstElement): the most serious state first, then the largest relative error.
    if (priority > worstPriority || (priority === worstPriority && cmp.rel[p] > cmp.rel[worstPos])) {
      worstPos = p;
      worstPriority = max(worstPriority, priority);
    }
    maxRel = max(maxRel, cmp.rel[p]);
  }

  let verdict: Verdict = 'pass';
  let note = '';
  if (refine.confirmed > 0 && worstPos >= 0) {
    verdict = 'mismatch';
    const p = worstPos;
    const k = cmp.worstProbe[p];
    const i = est.indices[p];
    // The relative error of the two numbers shown, so the message agrees with itself.
    const a = analytic[k][i];
    const nv = est.numeric[k][p];
    const shown = abs(a - nv) / max(abs(a), abs(nv), cmp.floors[k], 1e-300);
    cmp.rel[p] = shown;
    maxRel = max(maxRel, shown);
    note = `gradient of '${slot.name}' disagrees at ${elementName(slot, i)}: backward ${formatNumber(a)}, finite differences ${formatNumber(nv)} (relative error ${formatNumber(shown, 3)})`;
  } else if (refine.uncertain > 0 || refine.unrefined > 0) {
    verdict = 'inconclusive';
    note =
      refine.uncertainNote !== ''
        ? `'${slot.name}': ${refine.uncertainNote}`
        : `'${slot.name}': ${refine.unrefined} suspicious element${refine.unrefined === 1 ? '' : 's'} could not be refined within the limits`;
  }
  const kink = refine.kink;

  const worst =
    worstPos >= 0
      ? {
          index: unravelSlot(slot, est.indices[worstPos]),
          analytic: analytic[cmp.worstProbe[worstPos]][est.indices[worstPos]],
          numeric: est.numeric[cmp.worstProbe[worstPos]][worstPos],
          relError: cmp.rel[worstPos],
        }
      : null;
  const result: ParamResult = {
    name: slot.name,
    verdict,
    maxAbsError: maxAbs,
    maxRelError: maxRel,
    worst,
    shape: copyList(slot.shape),
    dtype: slot.dtype,
    method,
    elements: slot.size,
    checkedElements: est.indices.length,
    hints: [],
  };
  const evidence: ParamEvidence = { slot, analytic, est, cmp, tol, complete: complete && est.indices.length === slot.size };
  const check: ParamCheck = { result, evidence, kink, note, worstPos };
  if (refine.stoppedAt !== undefined && verdict === 'inconclusive') {
    check.timeStop = { param: slot.name, stage: 'suspicious elements refined', done: refine.stoppedAt.done, total: refine.stoppedAt.total };
  }
  return check;
}
