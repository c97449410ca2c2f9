// Checks a @jacobian op: the function returns the whole Jacobian of the forward's output with
// respect to each differentiated parameter (m×n, row-major), compared entry by entry with
// central differences of the forward, refined before any entry is blamed.

import { fail } from './failure';
import { checkUnchanged, readingResult, runAttempts, takeBaseline, unitVectors, type AttemptContext, type AttemptResult } from './kindBaseline';
import { kindAttemptResult, type KindParamCheck } from './kindResult';
import { checkMatrixBlock, matrixRows } from './matrixCompare';
import { readMatrix, splitParts } from './matrixRead';
import { OpHarness } from './opHarness';
import { describeOutputIndex, type OutputLayout } from './outputLayout';
import { STREAM } from './random';
import type { CheckSettings } from './settings';
import type { CheckOutcome, OpDescriptor } from '../model/types';

/**
 * Most outputs a Jacobian may have for an entry-by-entry check. Refining a column projects the
 * output difference on every row (m² work per forward call); beyond this, a Jacobian-vector
 * (@tangent) or vector-Jacobian (@backward) check suits. Our choice.
 */
export const JACOBIAN_MAX_OUTPUTS = 2048;

/** `output 1`, or `output 3 (index [1, 0])`, `output 2 ('pos' index [0])` for shaped outputs. */
export function outputName(layout: OutputLayout, k: number): string {
  if (layout.kind === 'number') return 'the output';
  if (layout.kind === 'typed' || (layout.kind === 'nested' && layout.shape.length === 1)) return `output ${k}`;
  return `output ${k} (${describeOutputIndex(layout, k)})`;
}

export function runJacobianCheck(exposed: Record<string, unknown>, op: OpDescriptor, settings: CheckSettings, seed: number, deadline: number, clock: () => number): CheckOutcome {
  const h = new OpHarness(op, exposed);
  return runAttempts(h, op, settings, seed, deadline, clock, jacobianAttempt);
}

function jacobianAttempt(ctx: AttemptContext): AttemptResult {
  const { h, op, settings } = ctx;
  const base = takeBaseline(h, op, settings, ctx.stream(STREAM.inputs), ctx.clock);
  const { slots, y0, layout } = base;
  const m = y0.length;
  if (m > JACOBIAN_MAX_OUTPUTS)
    fail(`forward has ${m} outputs; an entry-by-entry Jacobian check takes at most ${JACOBIAN_MAX_OUTPUTS} (check J·t with @tangent or Jᵀ·dy with @backward instead)`);
  const what = `jacobian '${op.backward}'`;
  const raw = h.derivativeRaw(y0, () => undefined);
  checkUnchanged(h, base, what);
  const parts = readingResult(what, () => splitParts(raw, slots, what, 'matrix'));
  const analytic: Float64Array[][] = [];
  for (let s = 0; s < slots.length; s++) {
    const slot = slots[s];
    const label = slots.length === 1 ? `${what} result` : `${what} matrix of '${slot.name}'`;
    const a = readingResult(what, () =>
      readMatrix(parts[s], m, slot.size, label, `${m} output${m === 1 ? '' : 's'}`, `${slot.size} element${slot.size === 1 ? '' : 's'} of '${slot.name}'`),
    );
    for (let e = 0; e < a.length; e++) {
      const v = a[e];
      if (v - v !== 0) fail(`${label} has ${v !== v ? 'NaN' : 'an infinite value'} at [${(e - (e % slot.size)) / slot.size}, ${e % slot.size}]`);
    }
    analytic[s] = matrixRows(a, m, slot.size);
  }
  const ws = unitVectors(m);
  const checks: KindParamCheck[] = [];
  for (let s = 0; s < slots.length; s++) {
    checks[s] = checkMatrixBlock(
      h,
      slots[s],
      analytic[s],
      y0,
      ws,
      base.uOut,
      base.tol,
      base.precision,
      'full',
      {
        symbol: slots.length === 1 ? 'J' : `J_${slots[s].name}`,
        colOffset: 0,
        rowName: (k) => outputName(layout, k),
        analyticWord: 'jacobian',
        numericWord: 'finite differences',
      },
      ctx.outOfTime,
      base.forwardMs,
    );
  }
  return kindAttemptResult(ctx, checks, base.inputs, '');
}
