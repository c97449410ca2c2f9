// One differentiated parameter: where its numbers live (a typed array, the leaves of a nested
// number[], or a scalar held in the argument list or on the instance) and in-place access to
// element i, so perturbations write into the very object the forward reads (no copies).

import { F64, copyFloats, formatIndex, fround, isArray, isF32, typedLength } from './builtins';
import type { Precision } from './precision';
import type { SampleDtype } from '../model/types';

type Host = Record<string | number, unknown>;

export class ParamSlot {
  /** Float typed array holding the elements, when the parameter is one (fast paths use it). */
  readonly typed: Float64Array | Float32Array | null;
  /** Innermost arrays of a nested number[], row-major, each of length leafLen. */
  private readonly leaves: number[][] | null;
  private readonly leafLen: number;

  constructor(
    /** Parameter name, or `this.FIELD`. */
    readonly name: string,
    /** Key of its gradient in an object-shaped backward result (`this.weight` → `weight`). */
    readonly key: string,
    readonly dtype: SampleDtype,
    readonly precision: Precision,
    readonly shape: number[],
    readonly size: number,
    /** Where a scalar lives: the argument list and position, or the instance and field. */
    private readonly host: Host,
    private readonly hostKey: string | number,
    storage: Float64Array | Float32Array | number[][] | null,
    /** The `@sample` range and avoid points, used to keep refinement steps inside. */
    readonly range: [number, number] | null,
    readonly avoid: number[],
  ) {
    this.typed = storage !== null && !isArray(storage) ? storage : null;
    this.leaves = storage !== null && isArray(storage) ? storage : null;
    this.leafLen = this.leaves !== null && this.leaves.length > 0 ? this.size / this.leaves.length : 0;
  }

  get(i: number): number {
    if (this.typed !== null) return this.typed[i];
    if (this.leaves !== null) {
      const r = (i / this.leafLen) | 0;
      return this.leaves[r][i - r * this.leafLen];
    }
    return this.host[this.hostKey] as number;
  }

  /** Stores v at element i and returns the value actually stored (float32 storage rounds). */
  set(i: number, v: number): number {
    if (this.typed !== null) {
      this.typed[i] = v;
      return this.typed[i];
    }
    if (this.leaves !== null) {
      const r = (i / this.leafLen) | 0;
      this.leaves[r][i - r * this.leafLen] = v;
      return v;
    }
    const stored = this.precision === 'f32' ? fround(v) : v;
    this.host[this.hostKey] = stored;
    return stored;
  }

  /** The parameter's current value object (what the forward and backward receive). */
  value(): unknown {
    return this.host[this.hostKey];
  }

  /** A copy of all elements. */
  snapshot(): Float64Array {
    const out = new F64(this.size);
    const typed = this.typed;
    if (typed !== null && typedLength(typed) === this.size) copyFloats(out, typed);
    else for (let i = 0; i < this.size; i++) out[i] = this.get(i);
    return out;
  }

  /** Writes all elements back from a copy. */
  restore(values: Float64Array): void {
    for (let i = 0; i < this.size; i++) this.set(i, values[i]);
  }
}

/** Leaves (innermost arrays) of a rectangular nested number[] of the given shape. */
export function nestedLeaves(value: unknown[], shape: number[]): number[][] {
  const out: number[][] = [];
  if (shape.length === 1) {
    out[0] = value as number[];
    return out;
  }
  const walk = (v: unknown[], dim: number): void => {
    if (dim === shape.length - 1) {
      out[out.length] = v as number[];
      return;
    }
    for (let i = 0; i < v.length; i++) walk(v[i] as unknown[], dim + 1);
  };
  walk(value, 0);
  return out;
}

/** Precision of a sampled value's storage. */
export function precisionOf(dtype: SampleDtype, value: unknown): Precision {
  if (isF32(value)) return 'f32';
  return dtype === 'f32' ? 'f32' : 'f64';
}

/** Multi-index of element i of a slot. */
export function unravelSlot(slot: ParamSlot, i: number): number[] {
  const idx: number[] = [];
  let j = i;
  for (let d = slot.shape.length - 1; d >= 0; d--) {
    const s = slot.shape[d];
    idx[d] = j % s;
    j = (j - idx[d]) / s;
  }
  return idx;
}

/** `x[2, 1]` or `b` for element i of a slot. */
export function elementName(slot: ParamSlot, i: number): string {
  return slot.shape.length ? `${slot.name}${formatIndex(unravelSlot(slot, i))}` : slot.name;
}
