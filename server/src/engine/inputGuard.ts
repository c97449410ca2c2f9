// Detects a forward or backward that changes its inputs: a deep copy of the numbers in every
// argument (and `this.FIELD` value) is taken before a call and compared after it.

import { F64, formatIndex, formatNumber, getPrototypeOf, isArray, isView, objectKeys, stringifyJson, toStringCall, isPlainPrototype } from './builtins';

/** A frozen copy of one value's numbers (typed arrays and arrays copied, plain objects walked). */
type Snap =
  | { kind: 'prim'; value: unknown }
  | { kind: 'view'; data: Float64Array | null; length: number }
  | { kind: 'array'; items: Snap[] }
  /** A plain array holding only numbers (a row of a nested `number[][]`): copied flat, one object per row. */
  | { kind: 'numbers'; data: Float64Array }
  | { kind: 'object'; keys: string[]; items: Snap[] }
  | { kind: 'opaque' };

/** Depth to which plain objects and arrays are copied; deeper parts are not guarded. */
const MAX_DEPTH = 6;

function snap(v: unknown, depth: number): Snap {
  if (v === null || (typeof v !== 'object' && typeof v !== 'function')) return { kind: 'prim', value: v };
  if (isView(v)) {
    const arr = v as unknown as ArrayLike<unknown>;
    const n = arr.length;
    if (typeof n !== 'number' || (n > 0 && typeof arr[0] !== 'number')) return { kind: 'opaque' };
    const data = new F64(n);
    for (let i = 0; i < n; i++) data[i] = arr[i] as number;
    return { kind: 'view', data, length: n };
  }
  if (depth >= MAX_DEPTH) return { kind: 'opaque' };
  if (isArray(v)) {
    let allNumbers = true;
    for (let i = 0; i < v.length && allNumbers; i++) if (typeof v[i] !== 'number') allNumbers = false;
    if (allNumbers) {
      const data = new F64(v.length);
      for (let i = 0; i < v.length; i++) data[i] = v[i] as number;
      return { kind: 'numbers', data };
    }
    const items: Snap[] = [];
    for (let i = 0; i < v.length; i++) items[i] = snap(v[i], depth + 1);
    return { kind: 'array', items };
  }
  const proto = getPrototypeOf(v);
  if (isPlainPrototype(proto)) {
    const keys = objectKeys(v);
    const items: Snap[] = [];
    for (let i = 0; i < keys.length; i++) items[i] = snap((v as Record<string, unknown>)[keys[i]], depth + 1);
    return { kind: 'object', keys, items };
  }
  return { kind: 'opaque' };
}

function same(a: unknown, b: unknown): boolean {
  return a === b || (a !== a && b !== b);
}

/** Path and values of the first difference, or null when equal. */
function diff(s: Snap, v: unknown, path: number[]): string | null {
  switch (s.kind) {
    case 'prim':
      return same(s.value, v) ? null : `${path.length ? `at ${formatIndex(path)} ` : ''}from ${show(s.value)} to ${show(v)}`;
    case 'view': {
      const arr = v as ArrayLike<number>;
      if (!isView(v) || arr.length !== s.length) return 'it was replaced or resized';
      const data = s.data as Float64Array;
      for (let i = 0; i < s.length; i++) {
        if (!same(data[i], arr[i])) {
          path[path.length] = i;
          return `at ${formatIndex(path)} from ${show(data[i])} to ${show(arr[i])}`;
        }
      }
      return null;
    }
    case 'numbers': {
      if (!isArray(v) || v.length !== s.data.length) return `${path.length ? `at ${formatIndex(path)} ` : ''}its length changed`;
      const data = s.data;
      for (let i = 0; i < data.length; i++) {
        if (!same(data[i], v[i])) {
          path[path.length] = i;
          return `at ${formatIndex(path)} from ${show(data[i])} to ${show(v[i])}`;
        }
      }
      return null;
    }
    case 'array': {
      if (!isArray(v) || v.length !== s.items.length) return `${path.length ? `at ${formatIndex(path)} ` : ''}its length changed`;
      for (let i = 0; i < s.items.length; i++) {
        const inner: number[] = [];
        for (let q = 0; q < path.length; q++) inner[q] = path[q];
        inner[inner.length] = i;
        const d = diff(s.items[i], v[i], inner);
        if (d !== null) return d;
      }
      return null;
    }
    case 'object': {
      if (v === null || typeof v !== 'object') return 'it was replaced';
      for (let i = 0; i < s.keys.length; i++) {
        const d = diff(s.items[i], (v as Record<string, unknown>)[s.keys[i]], path);
        if (d !== null) return `'${s.keys[i]}' ${d}`;
      }
      return null;
    }
    case 'opaque':
      return null;
  }
}

function show(v: unknown): string {
  return typeof v === 'number' ? formatNumber(v) : typeof v === 'string' ? stringifyJson(v) : toStringCall(v);
}

/** Copies of named inputs, to compare after a call. */
export class InputGuard {
  private readonly snaps: Snap[] = [];

  constructor(
    private readonly names: string[],
    values: unknown[],
  ) {
    for (let i = 0; i < values.length; i++) this.snaps[i] = snap(values[i], 0);
  }

  /** "'x' at [3] from 0.5 to 0" for the first changed input, or null. */
  firstChange(values: unknown[]): string | null {
    for (let i = 0; i < this.snaps.length; i++) {
      const d = diff(this.snaps[i], values[i], []);
      if (d !== null) return `'${this.names[i]}' ${d}`;
    }
    return null;
  }
}
