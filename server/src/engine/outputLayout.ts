// The shape of a forward's output (number, float typed array, nested number[], or an object of
// named outputs of those kinds): detected once, then used to flatten every later output into a
// Float64Array and to build upstream gradients `$dy` of the same shape.

import {
  copyFloats,
  describeValue,
  formatIndex,
  getPrototypeOf,
  isArray,
  isView,
  objectKeys,
  isF32,
  isF64,
  isPlainPrototype,
  newOpF32,
  newOpF64,
  newOpList,
  newOpRecord,
  typedLength,
} from './builtins';
import { fail } from './failure';
import type { Precision } from './precision';

export type OutputLayout =
  | { kind: 'number'; size: number }
  | { kind: 'typed'; f32: boolean; size: number }
  | { kind: 'nested'; shape: number[]; size: number }
  | { kind: 'object'; keys: string[]; parts: OutputLayout[]; offsets: number[]; size: number };

/** Shape of a rectangular nested number[] (throws via `fail` when it is not one). */
export function nestedShape(value: unknown[], what: string): number[] {
  const shape: number[] = [];
  let v: unknown = value;
  while (isArray(v)) {
    shape[shape.length] = v.length;
    if (v.length === 0) break;
    v = v[0];
  }
  if (shape[shape.length - 1] !== 0 && typeof v !== 'number') {
    fail(`${what} is an array whose entries are ${describeValue(v)}, not numbers`);
  }
  return shape;
}

function product(shape: number[]): number {
  let n = 1;
  for (let i = 0; i < shape.length; i++) n *= shape[i];
  return n;
}

/** Detects the layout of a forward's first output. */
export function detectLayout(value: unknown, what = 'forward output', depth = 0): OutputLayout {
  if (typeof value === 'number') return { kind: 'number', size: 1 };
  // The internal element count, as flattenInto reads it, not a `length` the array may have been given.
  if (isF64(value)) return { kind: 'typed', f32: false, size: typedLength(value) };
  if (isF32(value)) return { kind: 'typed', f32: true, size: typedLength(value) };
  if (isView(value)) fail(`${what} is ${describeValue(value)}; outputs must be numbers, Float64Array, Float32Array or number[]`);
  if (isArray(value)) {
    const shape = nestedShape(value, what);
    return { kind: 'nested', shape, size: product(shape) };
  }
  if (depth === 0 && value !== null && typeof value === 'object') {
    if (isPlainPrototype(getPrototypeOf(value))) {
      const keys = objectKeys(value);
      if (keys.length === 0) fail(`${what} is an empty object`);
      const parts: OutputLayout[] = [];
      const offsets: number[] = [];
      let size = 0;
      for (let i = 0; i < keys.length; i++) {
        const part = detectLayout((value as Record<string, unknown>)[keys[i]], `${what} '${keys[i]}'`, 1);
        parts[i] = part;
        offsets[i] = size;
        size += part.size;
      }
      return { kind: 'object', keys, parts, offsets, size };
    }
  }
  return fail(`${what} is ${describeValue(value)}; expected a number, a Float64Array or Float32Array, a nested number[], or an object of those`);
}

/** The coarsest precision among the output's parts (float32 parts round every value). */
export function layoutPrecision(layout: OutputLayout): Precision {
  if (layout.kind === 'typed') return layout.f32 ? 'f32' : 'f64';
  if (layout.kind === 'object') {
    for (let i = 0; i < layout.parts.length; i++) if (layoutPrecision(layout.parts[i]) === 'f32') return 'f32';
  }
  return 'f64';
}

function changed(what: string): never {
  return fail(`${what} changed shape between calls (a forward must return the same shape at every input)`);
}

function flattenNested(value: unknown, shape: number[], dim: number, dest: Float64Array, offset: number, what: string): number {
  if (!isArray(value) || value.length !== shape[dim]) changed(what);
  const arr = value as unknown[];
  if (dim === shape.length - 1) {
    for (let i = 0; i < arr.length; i++) {
      const x = arr[i];
      if (typeof x !== 'number') fail(`${what} has ${describeValue(x)} where a number belongs`);
      dest[offset + i] = x;
    }
    return offset + arr.length;
  }
  for (let i = 0; i < arr.length; i++) offset = flattenNested(arr[i], shape, dim + 1, dest, offset, what);
  return offset;
}

/** Copies an output of the given layout into dest[offset ..]. */
export function flattenInto(value: unknown, layout: OutputLayout, dest: Float64Array, offset = 0, what = 'forward output'): void {
  switch (layout.kind) {
    case 'number':
      if (typeof value !== 'number') changed(what);
      dest[offset] = value as number;
      return;
    case 'typed': {
      if (!(layout.f32 ? isF32(value) : isF64(value))) changed(what);
      const arr = value as Float64Array;
      if (typedLength(arr) !== layout.size) changed(what);
      copyFloats(dest, arr, offset);
      return;
    }
    case 'nested':
      flattenNested(value, layout.shape, 0, dest, offset, what);
      return;
    case 'object': {
      if (value === null || typeof value !== 'object') changed(what);
      const obj = value as Record<string, unknown>;
      for (let i = 0; i < layout.keys.length; i++) {
        flattenInto(obj[layout.keys[i]], layout.parts[i], dest, offset + layout.offsets[i], `${what} '${layout.keys[i]}'`);
      }
      return;
    }
  }
}

function buildNested(shape: number[], dim: number, flat: ArrayLike<number>, pos: { i: number }): unknown[] {
  const out = newOpList();
  const n = shape[dim];
  if (dim === shape.length - 1) {
    for (let k = 0; k < n; k++) out[k] = flat[pos.i++];
  } else {
    for (let k = 0; k < n; k++) out[k] = buildNested(shape, dim + 1, flat, pos);
  }
  return out;
}

/** A fresh value of the layout's shape holding flat[offset ..] (used for `$dy` and `$y`), made in the op's realm. */
export function buildValue(layout: OutputLayout, flat: ArrayLike<number>, offset = 0): unknown {
  switch (layout.kind) {
    case 'number':
      return flat[offset];
    case 'typed': {
      const out = layout.f32 ? newOpF32(layout.size) : newOpF64(layout.size);
      // A whole flat vector (the usual `$dy`) in one built-in copy; float32 rounds as assignment does.
      if (offset === 0 && isF64(flat) && typedLength(flat) === layout.size) copyFloats(out, flat);
      else for (let i = 0; i < layout.size; i++) out[i] = flat[offset + i];
      return out;
    }
    case 'nested':
      return buildNested(layout.shape, 0, flat, { i: offset });
    case 'object': {
      const out = newOpRecord();
      for (let i = 0; i < layout.keys.length; i++) out[layout.keys[i]] = buildValue(layout.parts[i], flat, offset + layout.offsets[i]);
      return out;
    }
  }
}

/** Where flat output index j lies, for messages: `index [2, 1]`, `'loss'`, `'y' index [3]`. */
export function describeOutputIndex(layout: OutputLayout, j: number): string {
  switch (layout.kind) {
    case 'number':
      return 'the value';
    case 'typed':
      return `index ${formatIndex([j])}`;
    case 'nested':
      return `index ${formatIndex(unravel(j, layout.shape))}`;
    case 'object': {
      let p = layout.keys.length - 1;
      while (p > 0 && layout.offsets[p] > j) p--;
      const inner = layout.parts[p];
      const rest = inner.kind === 'number' ? '' : ` ${describeOutputIndex(inner, j - layout.offsets[p])}`;
      return `'${layout.keys[p]}'${rest}`;
    }
  }
}

/** Multi-index of flat index j in a row-major shape. */
export function unravel(j: number, shape: number[]): number[] {
  const idx: number[] = [];
  for (let d = shape.length - 1; d >= 0; d--) {
    const s = shape[d];
    idx[d] = s > 0 ? j % s : 0;
    j = s > 0 ? (j - idx[d]) / s : 0;
  }
  return idx;
}

/** Index of the first NaN or ±Infinity in a flat vector, or -1. */
export function firstNonFinite(flat: Float64Array, n = flat.length): number {
  for (let j = 0; j < n; j++) {
    const v = flat[j];
    if (v - v !== 0) return j; // NaN - NaN and Inf - Inf are NaN
  }
  return -1;
}

/** "NaN" or "Infinity" for a non-finite value. */
export function nonFiniteName(v: number): string {
  return v !== v ? 'NaN' : v > 0 ? 'Infinity' : '-Infinity';
}
