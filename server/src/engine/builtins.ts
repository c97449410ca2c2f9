// Built-ins the engine uses, captured when the engine loads. User code runs afterwards (in the
// same vm context, or in a fresh one per op while the engine stays warm in its own) and may
// replace globals or patch prototypes; the engine keeps the originals.

// The engine's own typed arrays, for its working storage. What the op receives is made with the
// op realm's constructors below (newOpF64, …), and what the op returns is recognised whichever
// realm made it (isF64, isPlainPrototype).
export const F64 = Float64Array;
export const F32 = Float32Array;
export const I32 = Int32Array;
export const U8 = Uint8Array;
export const objectPrototype = Object.prototype;

/**
 * The intrinsics of an op's own context, captured by the context's setup script before user code
 * ran. When the engine runs in a context of its own (the warm runner, sandbox/child.ts), every
 * value handed to the op is built from these, so `x instanceof Float64Array` holds in user code
 * and nothing the op receives belongs to the engine's realm. The engine's working arrays stay its
 * own: arrays of a new realm in every check would turn its hot loops polymorphic (measured: a
 * 100-element row softmax 0.27 → 2.7 ms a check; bench/PERFORMANCE.md).
 */
export interface OpRealm {
  Float64Array: Float64ArrayConstructor;
  Float32Array: Float32ArrayConstructor;
  Int32Array: Int32ArrayConstructor;
  Uint8Array: Uint8ArrayConstructor;
  objectPrototype: object;
  /** The op context's JSON.parse, for values handed to the op (literal samples). */
  parseJson: (text: string) => unknown;
  /** A new empty array of the op context, for nested-array inputs. */
  newList: () => unknown[];
  /** A new empty plain object of the op context, for record-shaped `$dy` and `$y`. */
  newRecord: () => Record<string, unknown>;
}

const ownRealm: OpRealm = {
  Float64Array,
  Float32Array,
  Int32Array,
  Uint8Array,
  objectPrototype: Object.prototype,
  parseJson: (text: string) => parseJson(text),
  newList: () => [],
  newRecord: () => ({}),
};
let opRealm: OpRealm = ownRealm;

/** Makes `realm` the op realm for one check; null returns to the engine's own. */
export function enterOpRealm(realm: OpRealm | null): void {
  opRealm = realm ?? ownRealm;
}

/** A new Float64Array of the op realm (a value the op will receive). */
export function newOpF64(n: number): Float64Array {
  return new opRealm.Float64Array(n);
}

/** A new Float32Array of the op realm. */
export function newOpF32(n: number): Float32Array {
  return new opRealm.Float32Array(n);
}

/** A new Int32Array of the op realm. */
export function newOpI32(n: number): Int32Array {
  return new opRealm.Int32Array(n);
}

/** A new empty plain object of the op realm. */
export function newOpRecord(): Record<string, unknown> {
  return opRealm.newRecord();
}

/** A plain object's prototype (Object.prototype of the engine's or the op's realm, or null). */
export function isPlainPrototype(proto: unknown): boolean {
  return proto === null || proto === objectPrototype || proto === opRealm.objectPrototype;
}

// A typed array's kind from its internal slot (the %TypedArray%.prototype[Symbol.toStringTag]
// getter), which answers for arrays of any realm and cannot be faked by a prototype change.
const typedArrayTag = Object.getOwnPropertyDescriptor(Object.getPrototypeOf(Uint8Array.prototype) as object, Symbol.toStringTag)?.get as (this: unknown) => unknown;

function typedKind(v: unknown): unknown {
  return typeof v === 'object' && v !== null ? reflectApply(typedArrayTag, v, NO_ARGS) : undefined;
}

/** A Float64Array of any realm. */
export function isF64(v: unknown): v is Float64Array {
  return typedKind(v) === 'Float64Array';
}

/** A Float32Array of any realm. */
export function isF32(v: unknown): v is Float32Array {
  return typedKind(v) === 'Float32Array';
}

/** An Int32Array of any realm. */
export function isI32(v: unknown): v is Int32Array {
  return typedKind(v) === 'Int32Array';
}

// %TypedArray%.prototype's length getter and set, which read the internal slots of arrays of any
// realm and call nothing the op could have replaced (set with a typed array source does no species
// or property lookup).
const typedLengthGetter = Object.getOwnPropertyDescriptor(Object.getPrototypeOf(Uint8Array.prototype) as object, 'length')?.get as (this: unknown) => number;
const typedSet = (Object.getPrototypeOf(Uint8Array.prototype) as { set: (this: unknown, src: ArrayLike<number>, offset: number) => void }).set;

/** A float typed array's own element count (its internal slot, not a `length` it may have been given). */
export function typedLength(v: Float64Array | Float32Array): number {
  return reflectApply(typedLengthGetter, v, NO_ARGS);
}

// Argument lists reused by every call (nothing the op wrote runs inside these built-ins, so no
// call can start while another holds them): no allocation per copy.
const NO_ARGS: unknown[] = [];
const setArgs: unknown[] = [null, 0];

/**
 * dest[offset ..] = every element of src, by the built-in copy: one call instead of a loop,
 * which counts where the engine runs unoptimised (loaded into a fresh op context per check) and
 * where src belongs to another realm (a loop over it would turn polymorphic).
 */
export function copyFloats(dest: Float64Array | Float32Array, src: Float64Array | Float32Array, offset = 0): void {
  setArgs[0] = src;
  setArgs[1] = offset;
  try {
    reflectApply(typedSet, dest, setArgs);
  } finally {
    setArgs[0] = null; // no op's array kept past the copy
  }
}

/** JSON text parsed into the op realm's objects (a value the op will receive). */
export function parseJsonForOp(text: string): unknown {
  return opRealm.parseJson(text);
}

/** A new empty array of the op realm (an input the op will receive). */
export function newOpList(): unknown[] {
  return opRealm.newList();
}

export const abs = Math.abs;
export const sqrt = Math.sqrt;
export const floor = Math.floor;
export const ceil = Math.ceil;
export const min = Math.min;
export const max = Math.max;
export const log10 = Math.log10;
export const log = Math.log;
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
export const hasOwn = Object.prototype.hasOwnProperty;
export const reflectApply = Reflect.apply;
export const reflectConstruct = Reflect.construct;
export const toStringTagKey = Symbol.toStringTag;
export const toStringCall = String;
const numberToPrecision = Number.prototype.toPrecision;
const stringSlice = String.prototype.slice;
const stringIndexOf = String.prototype.indexOf;
const stringToLower = String.prototype.toLowerCase;
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

/** `s.toLowerCase()` with the captured original. */
export function lowerText(s: string): string {
  return reflectApply(stringToLower, s, NO_ARGS) as string;
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
