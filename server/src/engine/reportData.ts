// Data for the editor's report and for "copy as regression test": the error-against-step scan
// at the worst element, the per-element error map of 2-D parameters, and the sample inputs as
// JSON-safe values.

import { F64, abs, getPrototypeOf, isArray, isFiniteNumber, isView, objectKeys, pow, isF32, isF64, isI32, isPlainPrototype } from './builtins';
import { projectDifference, type Line } from './lines';
import type { Sample } from './sampling';
import type { StepScan } from '../model/types';

/** Steps of the scan, unit: fraction of max(1, |x|): one per decade from 1e-1 down to 1e-13. */
export const STEP_SCAN_DECADES = { from: -1, to: -13 } as const;

/**
 * |analytic − central difference| at log-spaced steps: a correct gradient shows the V of
 * truncation (∝ h²) meeting roundoff (∝ u/h) near u^(1/3) (Nocedal & Wright, 2nd ed., §8.1);
 * a wrong one a flat floor at the size of the error.
 */
export function stepScan(line: Line, w: Float64Array, analytic: number, scale: number): StepScan {
  const steps: number[] = [];
  const absErrors: number[] = [];
  const m = w.length;
  const plus = new F64(m);
  const minus = new F64(m);
  const proj = new F64(1);
  for (let e = STEP_SCAN_DECADES.from; e >= STEP_SCAN_DECADES.to; e--) {
    const t = scale / pow(10, -e); // 1/10^k is correctly rounded, 10^-k from pow may not be
    if (t > line.maxStep) continue; // would cross an avoid point or leave the range
    const sp = line.evalAt(t, plus);
    const sm = line.evalAt(-t, minus);
    if (sp !== sp || sm !== sm || sp === sm) continue;
    projectDifference([w], plus, minus, proj);
    const cd = proj[0] / (sp - sm);
    if (!isFiniteNumber(cd)) continue;
    steps[steps.length] = t;
    absErrors[absErrors.length] = abs(analytic - cd);
  }
  return { steps, absErrors };
}

/** Largest 2-D parameter, in elements, that gets a per-element error map. */
export const ERROR_MAP_MAX_ELEMENTS = 4096;

/** Largest sample, in numbers, included in the outcome for "copy as regression test". */
export const INPUTS_MAX_NUMBERS = 2000;

/** JSON-safe copy of one input, counting numbers; null when over budget. */
function jsonSafe(v: unknown, budget: { left: number }, depth: number): unknown {
  if (budget.left < 0) return null;
  if (typeof v === 'number') {
    budget.left--;
    return isFiniteNumber(v) ? v : null;
  }
  if (v === null || typeof v === 'string' || typeof v === 'boolean') return v;
  if (v === undefined) return null;
  if (isView(v)) {
    const dtype = isF64(v) ? 'f64' : isF32(v) ? 'f32' : isI32(v) ? 'i32' : 'other';
    const arr = v as unknown as ArrayLike<number>;
    budget.left -= arr.length;
    if (budget.left < 0) return null;
    const data: (number | null)[] = [];
    for (let i = 0; i < arr.length; i++) {
      const x = arr[i];
      data[i] = typeof x === 'number' && isFiniteNumber(x) ? x : null;
    }
    return { dtype, data };
  }
  if (depth > 8) return null;
  if (isArray(v)) {
    const out: unknown[] = [];
    for (let i = 0; i < v.length; i++) out[i] = jsonSafe(v[i], budget, depth + 1);
    return out;
  }
  if (typeof v === 'object') {
    const proto = getPrototypeOf(v);
    if (!isPlainPrototype(proto)) return null;
    const out: Record<string, unknown> = {};
    const keys = objectKeys(v);
    for (let i = 0; i < keys.length; i++) out[keys[i]] = jsonSafe((v as Record<string, unknown>)[keys[i]], budget, depth + 1);
    return out;
  }
  return null;
}

/** The sample as drawn, or undefined when it holds more than INPUTS_MAX_NUMBERS numbers. */
export function captureInputs(sample: Sample): { args: unknown[]; fields: Record<string, unknown> } | undefined {
  const budget = { left: INPUTS_MAX_NUMBERS };
  const args: unknown[] = [];
  for (let i = 0; i < sample.args.length; i++) args[i] = jsonSafe(sample.args[i], budget, 0);
  const fields: Record<string, unknown> = {};
  for (let i = 0; i < sample.fields.length; i++) fields[sample.fields[i].field] = jsonSafe(sample.fields[i].value, budget, 0);
  return budget.left >= 0 ? { args, fields } : undefined;
}

/** Replaces every non-finite number in a JSON-bound value with null (the outcome must be JSON-safe). */
export function finiteOnly<T>(v: T): T {
  if (typeof v === 'number') return (isFiniteNumber(v) ? v : null) as T;
  if (isArray(v)) {
    for (let i = 0; i < v.length; i++) v[i] = finiteOnly(v[i]);
    return v;
  }
  if (v !== null && typeof v === 'object') {
    const keys = objectKeys(v);
    for (let i = 0; i < keys.length; i++) {
      const o = v as Record<string, unknown>;
      o[keys[i]] = finiteOnly(o[keys[i]]);
    }
  }
  return v;
}
