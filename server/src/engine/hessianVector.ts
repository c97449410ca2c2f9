// The H·v form of a @hessian op (`$v` among its arguments): for each parameter, random
// directions v of that parameter alone (the others zero); H·v is compared entry by entry with
// differences of the gradient along v, or with second differences of the forward.

import { F64, max, newOpList, sliceText } from './builtins';
import { CheckStop, fail } from './failure';
import type { GradientMap } from './gradientMap';
import { readGradients } from './gradients';
import { hvpBySecondDifferences, type Coords } from './hessianSecond';
import { checkUnchanged, readingResult, type AttemptContext, type AttemptResult, type Baseline } from './kindBaseline';
import { DirectionTally, directionKink, kindAttemptResult, type KindParamCheck } from './kindResult';
import { directionLine } from './lines';
import type { ParamSlot } from './paramSlot';
import { STREAM, STREAM_STRIDE, fillSigned, substream } from './random';
import { compareAlongLine, shapedLike } from './tangentCheck';
import type { BackwardArg } from '../model/types';

/** $v for slot s's direction (zeros in the other parameters): one part, or one per parameter. */
function vectorValue(slots: ParamSlot[], s: number, v: Float64Array): unknown {
  if (slots.length === 1) return shapedLike(slots[0].value(), v, { i: 0 });
  const parts = newOpList();
  for (let q = 0; q < slots.length; q++) parts[q] = shapedLike(slots[q].value(), q === s ? v : new F64(slots[q].size), { i: 0 });
  return parts;
}

/** Reads H·v (one part per parameter) into one flat vector in declaration order. */
function readProduct(raw: unknown, slots: ParamSlot[], c: Coords, what: string): Float64Array {
  const parts: Float64Array[] = [];
  for (let s = 0; s < slots.length; s++) parts[s] = new F64(slots[s].size);
  try {
    readGradients(raw, slots, parts);
  } catch (e) {
    if (!(e instanceof CheckStop)) throw e;
    const msg = e.message;
    // The reader speaks of a backward's gradients; here it is a Hessian-vector product.
    fail(`${what}: ${sliceText(msg, 0, 10) === 'backward: ' ? sliceText(msg, 10) : msg} (H·v has one part per parameter, shaped like it)`);
  }
  const out = new F64(c.n);
  for (let s = 0; s < slots.length; s++) for (let i = 0; i < slots[s].size; i++) out[c.offsets[s] + i] = parts[s][i];
  return out;
}

/** One attempt of an H·v op: every parameter along its own random directions. */
export function hvpAttempt(ctx: AttemptContext, base: Baseline, c: Coords, gm: GradientMap | null, name: (g: number) => string): AttemptResult {
  const { h, op, settings } = ctx;
  const { slots, y0 } = base;
  const what = `hessian '${op.backward}'`;
  const probes = max(1, settings.upstreamProbes);
  const g0 = gm !== null ? gm.forwardInto(null, true) : null;
  const checks: KindParamCheck[] = [];
  for (let s = 0; s < slots.length; s++) {
    const slot = slots[s];
    const random = substream(ctx.seed, ctx.attempt * STREAM_STRIDE + STREAM.directions, s);
    const tally = new DirectionTally();
    for (let p = 0; p < probes && !tally.mismatched; p++) {
      const d = fillSigned(random, new F64(slot.size));
      // directionLine scales the direction per element by max(1, |x|): that scaled vector is v.
      const line = directionLine(gm ?? h, slot, d);
      const v = line.scaled;
      const placeholder = (a: BackwardArg): unknown => (a.kind === 'vector' ? vectorValue(slots, s, v) : undefined);
      // A method's derivative may read state its forward cached: run the forward at the sample point first.
      if (h.backwardNeedsFreshForward) h.forwardInto(new F64(1), true);
      const raw = h.derivativeRaw(y0, placeholder);
      checkUnchanged(h, base, what);
      const analytic = readingResult(what, () => readProduct(raw, slots, c, what));
      for (let k = 0; k < c.n; k++) if (analytic[k] - analytic[k] !== 0) fail(`${what} result has ${analytic[k] !== analytic[k] ? 'NaN' : 'an infinite value'} at ${name(k)}`);
      if (gm !== null && g0 !== null) {
        const cmp = compareAlongLine(line, analytic, g0, base.uOut, base.tol, base.precision, name, {
          subject: `H·v for a v of '${slot.name}'`,
          analyticWord: 'hessian',
          numericWord: 'differences of the gradient along v',
        });
        tally.add({ verdict: cmp.verdict, note: cmp.note, maxAbs: cmp.maxAbs, maxRel: cmp.maxRel, kink: directionKink(slot, cmp.kinkJump) });
      } else {
        tally.add(hvpBySecondDifferences(h, base, c, slot, v, analytic, name));
      }
    }
    checks[s] = tally.finish(slot, gm !== null ? 'gradient-differences' : 'second-differences');
  }
  return kindAttemptResult(ctx, checks, base.inputs, '');
}
