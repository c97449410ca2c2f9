// For an op with several named outputs: which output's term of the gradient is wrong. At the
// worst element of a mismatching parameter, the upstream gradient is split by output (zero on
// every other output), and the backward and a Ridders-refined central difference (Numerical
// Recipes 3rd ed. §5.7) are compared per output. Named only when one output accounts for it.

import { F64, abs, formatIndex, formatNumber, max } from './builtins';
import { centralOnLine, elementLine } from './lines';
import type { OpHarness } from './opHarness';
import { unravelSlot, type ParamSlot } from './paramSlot';
import type { OutputLayout } from './outputLayout';
import { ridders } from './ridders';

/**
 * An output's term agrees when its gap is within this many tolerances of the larger of the
 * two values (dimensionless; the same margin as the hints, our choice).
 */
const AGREE_FACTOR = 10;

/**
 * "output 'total' accounts for the disagreement ..." or null (one output, or none or several
 * disagree). `backward(w)` returns every slot's gradient for upstream vector w.
 */
export function blameOutput(
  h: OpHarness,
  layout: OutputLayout,
  slot: ParamSlot,
  slotIndex: number,
  element: number,
  w: Float64Array,
  tol: number,
  backward: (w: Float64Array) => Float64Array[],
): string | null {
  if (layout.kind !== 'object' || layout.keys.length < 2) return null;
  const parts = layout.keys.length;
  const split: Float64Array[] = [];
  for (let o = 0; o < parts; o++) {
    const wo = new F64(w.length);
    const from = layout.offsets[o];
    const to = from + layout.parts[o].size;
    for (let j = from; j < to; j++) wo[j] = w[j];
    split[o] = wo;
  }
  const analytic = new F64(parts);
  for (let o = 0; o < parts; o++) analytic[o] = backward(split[o])[slotIndex][element];
  const line = elementLine(h, slot, element);
  const plus = new F64(w.length);
  const minus = new F64(w.length);
  const numeric = ridders((t) => centralOnLine(line, split, t, plus, minus), line.refineStep, parts);
  // The scale below which a term counts as zero: the largest term of either kind.
  let scale = 0;
  for (let o = 0; o < parts; o++) scale = max(scale, abs(analytic[o]), abs(numeric.value[o]));
  if (scale === 0) return null;
  let wrong = -1;
  for (let o = 0; o < parts; o++) {
    const gap = abs(analytic[o] - numeric.value[o]);
    const allowed = AGREE_FACTOR * tol * max(abs(analytic[o]), abs(numeric.value[o]), 1e-3 * scale) + numeric.error[o];
    if (gap > allowed) {
      if (wrong >= 0) return null; // more than one output disagrees
      wrong = o;
    }
  }
  if (wrong < 0) return null;
  const at = slot.shape.length ? `${slot.name}${formatIndex(unravelSlot(slot, element))}` : slot.name;
  return `output '${layout.keys[wrong]}' accounts for the disagreement: its term of the gradient at ${at} is ${formatNumber(analytic[wrong])} from the backward and ${formatNumber(numeric.value[wrong])} from finite differences; the other outputs' terms agree`;
}
