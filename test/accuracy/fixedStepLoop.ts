// The hand-written gradient check a practitioner typically writes first: central differences with
// a fixed absolute step, one relative tolerance, no refinement, no kink handling. The accuracy
// test runs it over the corpus's simple ops as the baseline the product must beat.

import { drawValue, seededRandom, type SimpleOp } from './sampleSpecs';

/** Fixed absolute step of the baseline loop (common practice, not from a handbook). */
export const FIXED_STEP = 1e-5;
/** Relative tolerance of the baseline loop (common practice, not from a handbook). */
export const FIXED_REL_TOLERANCE = 1e-5;

/** A handle on one number inside an argument: a typed-array or nested-array element, or the argument itself. */
interface Slot {
  get(): number;
  set(v: number): void;
}

export interface FixedStepResult {
  flagged: boolean;
  worstRelError: number;
  /** Set when the forward or backward threw. */
  failure?: string;
}

/** Runs the baseline check of one op; `fns` maps binding names to the module's functions. */
export function fixedStepCheck(op: SimpleOp, fns: Record<string, unknown>, seed: number): FixedStepResult {
  const forward = fns[op.forward] as (...a: unknown[]) => unknown;
  const backward = fns[op.backward] as (...a: unknown[]) => unknown;
  const random = seededRandom(seed);
  const args = op.params.map((p) => drawValue(p.spec, random));
  const withDy = op.backwardArgs.includes('$dy');
  try {
    const y = forward(...args);
    const dy = withDy ? randomLike(y, random) : 1;
    const loss = (): number => dotAll(forward(...args), dy);
    const backArgs = op.backwardArgs.map((a) => (a === '$dy' ? dy : a === '$y' ? y : args[op.params.findIndex((p) => p.name === a)]));
    const result = backward(...backArgs);
    const differentiated = op.params
      .map((p, i) => ({ ...p, index: i }))
      .filter((p) => p.spec.kind === 'random' && !p.spec.fixed && p.spec.dtype !== 'i32' && p.spec.dtype !== 'int');
    let worst = 0;
    differentiated.forEach((p, k) => {
      const grad = pickGradient(result, p.name, k, differentiated.length);
      const analytic = flatten(grad);
      const slots = slotsOf(args, p.index);
      slots.forEach((slot, e) => {
        const x0 = slot.get();
        slot.set(x0 + FIXED_STEP);
        const up = loss();
        slot.set(x0 - FIXED_STEP);
        const down = loss();
        slot.set(x0);
        const numeric = (up - down) / (2 * FIXED_STEP);
        const a = analytic[e];
        const scale = Math.max(Math.abs(a), Math.abs(numeric));
        const rel = scale === 0 ? 0 : Math.abs(a - numeric) / scale;
        worst = Number.isNaN(rel) || a === undefined ? Infinity : Math.max(worst, rel);
      });
    });
    return { flagged: !(worst <= FIXED_REL_TOLERANCE), worstRelError: worst };
  } catch (e) {
    return { flagged: true, worstRelError: Infinity, failure: String(e) };
  }
}

/** The gradient of the k-th differentiated parameter from a backward's result. */
function pickGradient(result: unknown, name: string, k: number, count: number): unknown {
  const isPlainObject = typeof result === 'object' && result !== null && !Array.isArray(result) && !ArrayBuffer.isView(result);
  if (isPlainObject) return (result as Record<string, unknown>)[name];
  if (count === 1) return result;
  return (result as unknown[])[k];
}

/** Slots of every element of argument `index` (the argument itself when it is a number). */
function slotsOf(args: unknown[], index: number): Slot[] {
  const value = args[index];
  if (typeof value === 'number') return [{ get: () => args[index] as number, set: (v) => (args[index] = v) }];
  const out: Slot[] = [];
  const walk = (container: unknown): void => {
    const arr = container as { length: number; [i: number]: unknown };
    for (let i = 0; i < arr.length; i++) {
      if (typeof arr[i] === 'number') out.push({ get: () => arr[i] as number, set: (v) => (arr[i] = v) });
      else walk(arr[i]);
    }
  };
  walk(value);
  return out;
}

/** Every number of a value (number, typed array, nested array, object of those; keys sorted). */
export function flatten(value: unknown): number[] {
  if (typeof value === 'number') return [value];
  if (ArrayBuffer.isView(value)) return Array.from(value as unknown as ArrayLike<number>);
  if (Array.isArray(value)) return value.flatMap((v) => flatten(v));
  if (typeof value === 'object' && value !== null) {
    const rec = value as Record<string, unknown>;
    return Object.keys(rec)
      .sort()
      .flatMap((k) => flatten(rec[k]));
  }
  return [NaN];
}

/** A value shaped like `y` with uniform entries in [-1, 1] (typed arrays become plain arrays of the same values). */
function randomLike(y: unknown, random: () => number): unknown {
  if (typeof y === 'number') return 2 * random() - 1;
  if (y instanceof Float32Array) return Float32Array.from(y, () => 2 * random() - 1);
  if (ArrayBuffer.isView(y)) return Float64Array.from(y as unknown as ArrayLike<number>, () => 2 * random() - 1);
  if (Array.isArray(y)) return y.map((v) => randomLike(v, random));
  const rec = y as Record<string, unknown>;
  return Object.fromEntries(Object.keys(rec).map((k) => [k, randomLike(rec[k], random)]));
}

/** Σ y·dy over matching structures. */
function dotAll(y: unknown, dy: unknown): number {
  const a = flatten(y);
  const b = flatten(dy);
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i] * b[i];
  return s;
}
