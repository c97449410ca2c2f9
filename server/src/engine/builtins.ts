// Built-ins the engine uses, captured when the engine loads. User code runs in the same vm
// context afterwards and may replace globals or patch prototypes; the engine keeps the originals.

export const F64 = Float64Array;
export const F32 = Float32Array;
export const I32 = Int32Array;
export const U8 = Uint8Array;

export const abs = Math.abs;
export const sqrt = Math.sqrt;
export const floor = Math.floor;
export const ceil = Math.ceil;
export const min = Math.min;
export const max = Math.max;
export const log10 = Math.log10;
export const pow = Math.pow;
export const round = Math.round;
export const fround = Math.fround;
export const imul = Math.imul;
export const cbrt = Math.cbrt;

export const isFiniteNumber = Number.isFinite;
export const isInteger = Number.isInteger;
export const isArray = Array.isArray;
export const isView = ArrayBuffer.isView;
export const objectKeys = Object.keys;
export const getPrototypeOf = Object.getPrototypeOf;
export const objectPrototype = Object.prototype;
export const hasOwn = Object.prototype.hasOwnProperty;
export const reflectApply = Reflect.apply;
export const reflectConstruct = Reflect.construct;
export const toStringTagKey = Symbol.toStringTag;
export const toStringCall = String;
const numberToPrecision = Number.prototype.toPrecision;
const stringSlice = String.prototype.slice;
const stringIndexOf = String.prototype.indexOf;
const jsonStringify = JSON.stringify;
const jsonParse = JSON.parse;

export function stringifyJson(value: unknown): string {
  return reflectApply(jsonStringify, JSON, [value]) as string;
}

export function parseJson(text: string): unknown {
  return reflectApply(jsonParse, JSON, [text]);
}

/** `s.slice(a, b)` with the captured original. */
export function sliceText(s: string, a: number, b?: number): string {
  return reflectApply(stringSlice, s, b === undefined ? [a] : [a, b]) as string;
}

/** `s.indexOf(sub)` with the captured original. */
export function findText(s: string, sub: string): number {
  return reflectApply(stringIndexOf, s, [sub]) as number;
}

/** Whether a list holds a value (no Array.prototype methods: user code may replace them). */
export function contains<T>(list: ArrayLike<T>, v: T): boolean {
  for (let i = 0; i < list.length; i++) if (list[i] === v) return true;
  return false;
}

/** A copy of a list without Array.prototype.slice (user code may have replaced it). */
export function copyList(list: ArrayLike<number>): number[] {
  const out: number[] = [];
  for (let i = 0; i < list.length; i++) out[i] = list[i];
  return out;
}

/** Position of a value in a list, or -1. */
export function positionOf<T>(list: ArrayLike<T>, v: T): number {
  for (let i = 0; i < list.length; i++) if (list[i] === v) return i;
  return -1;
}

/** `'a', 'b', 'c'` for messages. */
export function quotedList(list: ArrayLike<string>): string {
  let out = '';
  for (let i = 0; i < list.length; i++) out += (i > 0 ? ', ' : '') + `'${list[i]}'`;
  return out;
}

/** `Object.prototype.hasOwnProperty.call(o, k)` with the captured original. */
export function ownKey(o: object, k: string): boolean {
  return reflectApply(hasOwn, o, [k]) as boolean;
}

/** A number for messages: integers as they are, others with `digits` significant digits. */
export function formatNumber(v: number, digits = 6): string {
  if (v !== v) return 'NaN';
  if (v === Infinity) return 'Infinity';
  if (v === -Infinity) return '-Infinity';
  if (isInteger(v) && abs(v) < 1e15) return toStringCall(v);
  const text = reflectApply(numberToPrecision, v, [digits]) as string;
  // Drop trailing zeros of the mantissa: 0.500000 → 0.5, 1.20000e-7 → 1.2e-7.
  const e = findText(text, 'e');
  const mant = e < 0 ? text : sliceText(text, 0, e);
  const exp = e < 0 ? '' : sliceText(text, e);
  let m = mant;
  if (findText(m, '.') >= 0) {
    let end = m.length;
    while (end > 0 && m[end - 1] === '0') end--;
    if (m[end - 1] === '.') end--;
    m = sliceText(m, 0, end);
  }
  return m + exp;
}

/** `[i, j]` for a multi-index. */
export function formatIndex(index: ArrayLike<number>): string {
  let s = '[';
  for (let i = 0; i < index.length; i++) s += (i > 0 ? ', ' : '') + toStringCall(index[i]);
  return s + ']';
}

/** Characters of a thrown non-Error value quoted in a message: enough to recognise it. */
const THROWN_VALUE_CHARS = 200;

/** A short description of a thrown value that never throws itself. */
export function describeThrown(e: unknown): string {
  try {
    if (e !== null && typeof e === 'object') {
      const msg = (e as { message?: unknown }).message;
      const name = (e as { name?: unknown }).name;
      if (typeof msg === 'string') return typeof name === 'string' && name !== 'Error' ? `${name}: ${msg}` : msg;
    }
    // A thrown value that is not an Error says so, with the value as JSON where it has one
    // ("[object Object]" tells the user nothing about `throw { code: 7 }`).
    const kind = e === null ? 'null' : isArray(e) ? 'array' : typeof e;
    let text: string | undefined;
    try {
      text = typeof e === 'object' || typeof e === 'string' ? stringifyJson(e) : undefined;
    } catch {
      text = undefined;
    }
    if (typeof text !== 'string') text = toStringCall(e);
    if (text.length > THROWN_VALUE_CHARS) text = `${sliceText(text, 0, THROWN_VALUE_CHARS)}…`;
    return `${text} (a thrown ${kind}, not an Error)`;
  } catch {
    return 'an exception that could not be described';
  }
}

/** `typeof` plus a class name where there is one, for "got …" in messages. */
export function describeValue(v: unknown): string {
  try {
    if (v === null) return 'null';
    if (v === undefined) return 'undefined';
    if (typeof v === 'number') return `the number ${formatNumber(v)}`;
    if (typeof v !== 'object' && typeof v !== 'function') return `a ${typeof v}`;
    if (isArray(v)) return `an array of ${v.length}`;
    if (isView(v)) {
      const ctor = (v as { constructor?: { name?: unknown } }).constructor;
      const name = ctor && typeof ctor.name === 'string' ? ctor.name : 'typed array';
      return `a ${name} of ${(v as unknown as ArrayLike<number>).length}`;
    }
    if (typeof v === 'function') return 'a function';
    // An async function's result: say so, since "an object" hides the usual cause.
    if (typeof (v as { then?: unknown }).then === 'function') return 'a Promise (checks need the value itself, not a promise of it)';
    return 'an object';
  } catch {
    return 'a value that could not be inspected';
  }
}

/** Ascending sort of indices by a key, without Array.prototype.sort (user code may patch it). */
export function sortIndicesBy(indices: number[], key: (i: number) => number, descending = false): number[] {
  const n = indices.length;
  const keys = new F64(n);
  for (let i = 0; i < n; i++) keys[i] = descending ? -key(indices[i]) : key(indices[i]);
  // Merge sort on positions: stable and O(n log n).
  let src: number[] = [];
  for (let i = 0; i < n; i++) src[i] = i;
  let dst: number[] = new Array<number>(n);
  for (let width = 1; width < n; width *= 2) {
    for (let lo = 0; lo < n; lo += 2 * width) {
      const mid = min(lo + width, n);
      const hi = min(lo + 2 * width, n);
      let a = lo;
      let b = mid;
      let k = lo;
      while (a < mid && b < hi) dst[k++] = keys[src[a]] <= keys[src[b]] ? src[a++] : src[b++];
      while (a < mid) dst[k++] = src[a++];
      while (b < hi) dst[k++] = src[b++];
    }
    const t = src;
    src = dst;
    dst = t;
  }
  const out: number[] = [];
  for (let i = 0; i < n; i++) out[i] = indices[src[i]];
  return out;
}
