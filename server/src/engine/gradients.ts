// Reads what a backward returned into one flat Float64Array per differentiated parameter,
// accepting the shapes the interface allows and naming the parameter and the shapes when the
// result does not fit.

import {
  F64,
  copyFloats,
  describeValue,
  formatIndex,
  getPrototypeOf,
  isArray,
  isF32,
  isF64,
  isView,
  objectKeys,
  ownKey,
  quotedList,
  isPlainPrototype,
  typedLength,
} from './builtins';
import { fail } from './failure';
import type { ParamSlot } from './paramSlot';

/** Shape of a returned value for messages, or null when it is not numbers. */
export function shapeOf(v: unknown): number[] | null {
  if (typeof v === 'number') return [];
  if (isView(v)) return [(v as unknown as ArrayLike<number>).length];
  if (!isArray(v)) return null;
  const shape: number[] = [];
  let cur: unknown = v;
  while (isArray(cur)) {
    shape[shape.length] = cur.length;
    if (cur.length === 0) return shape;
    cur = cur[0];
  }
  return typeof cur === 'number' ? shape : null;
}

function sizeOf(shape: number[]): number {
  let n = 1;
  for (let i = 0; i < shape.length; i++) n *= shape[i];
  return n;
}

function sameShape(a: number[], b: number[]): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}

/** Copies a rectangular nested number[] into dest; false when it is ragged or not numbers. */
function copyNested(v: unknown, shape: number[], dim: number, dest: Float64Array, pos: { i: number }): boolean {
  if (!isArray(v) || v.length !== shape[dim]) return false;
  if (dim === shape.length - 1) {
    for (let k = 0; k < v.length; k++) {
      const x = v[k];
      if (typeof x !== 'number') return false;
      dest[pos.i++] = x;
    }
    return true;
  }
  for (let k = 0; k < v.length; k++) if (!copyNested(v[k], shape, dim + 1, dest, pos)) return false;
  return true;
}

/** Shape text of a slot: `[3, 4]`, or "a scalar". */
function slotShapeText(slot: ParamSlot): string {
  return slot.shape.length === 0 ? 'a number (the parameter is a scalar)' : `shape ${formatIndex(slot.shape)}`;
}

/**
 * Reads one gradient into dest, or returns a message saying why it does not fit. Accepted: a
 * number for a scalar; a float typed array or number[] of the parameter's element count; a
 * nested number[] of the parameter's shape. `label` names the value in the message.
 */
export function readGradient(value: unknown, slot: ParamSlot, dest: Float64Array, label = `gradient of '${slot.name}'`): string | null {
  if (slot.shape.length === 0) {
    if (typeof value === 'number') {
      dest[0] = value;
      return null;
    }
    return `${label} is ${describeValue(value)}, expected a number (the parameter is a scalar)`;
  }
  if (isView(value)) {
    const arr = value as unknown as ArrayLike<number>;
    if (typeof arr.length !== 'number' || typeof (arr.length > 0 ? arr[0] : 0) !== 'number') {
      return `${label} is ${describeValue(value)}, expected numbers`;
    }
    if (arr.length !== slot.size) {
      return `${label} has ${arr.length} elements, expected ${slotShapeText(slot)} (${slot.size} elements)`;
    }
    if ((isF64(value) || isF32(value)) && typedLength(value) === slot.size) copyFloats(dest, value);
    else for (let i = 0; i < slot.size; i++) dest[i] = arr[i];
    return null;
  }
  const shape = shapeOf(value);
  if (shape === null) return `${label} is ${describeValue(value)}, expected ${slotShapeText(slot)}`;
  const flatOk = shape.length === 1 && shape[0] === slot.size;
  if (!flatOk && !sameShape(shape, slot.shape)) {
    return `${label} has shape ${formatIndex(shape)} (${sizeOf(shape)} elements), expected ${slotShapeText(slot)}`;
  }
  const ok = copyNested(value, flatOk ? [slot.size] : slot.shape, 0, dest, { i: 0 });
  return ok ? null : `${label} is a ragged or non-numeric array, expected ${slotShapeText(slot)}`;
}

/** When gradient shapes do not fit but would fit with two parameters exchanged, says so. */
function swapNote(entries: unknown[], slots: ParamSlot[], bad: number): string {
  for (let q = 0; q < slots.length; q++) {
    if (q === bad) continue;
    const scratchBad = new F64(slots[q].size);
    const scratchQ = new F64(slots[bad].size);
    if (readGradient(entries[bad], slots[q], scratchBad) === null && readGradient(entries[q], slots[bad], scratchQ) === null) {
      return ` — it fits '${slots[q].name}' instead: the gradients of '${slots[bad].name}' and '${slots[q].name}' look swapped`;
    }
  }
  return '';
}

/**
 * The key of a slot's gradient in an object-shaped result: its own key (`weight` for
 * `this.weight`), or for a field the name as the @sample tag writes it (`this.weight`), which
 * wins when both are present (a forward parameter `weight` may own the short key).
 */
function keyIn(obj: object, slot: ParamSlot): string | null {
  if (slot.name !== slot.key && ownKey(obj, slot.name)) return slot.name;
  return ownKey(obj, slot.key) ? slot.key : null;
}

/**
 * Splits a backward result into per-parameter gradients (the gradient itself for one
 * parameter; an array in declaration order or an object keyed by name for several).
 */
export function readGradients(result: unknown, slots: ParamSlot[], dests: Float64Array[]): void {
  const n = slots.length;
  if (n === 1) {
    const message = readGradient(result, slots[0], dests[0]);
    if (message === null) return;
    // Also accept a one-entry list or an object keyed by the name for a single parameter.
    if (isArray(result) && result.length === 1 && typeof result[0] !== 'number') {
      if (readGradient(result[0], slots[0], dests[0]) === null) return;
    }
    const single = result !== null && typeof result === 'object' && !isArray(result) && !isView(result) ? keyIn(result, slots[0]) : null;
    if (single !== null) {
      const inner = readGradient((result as Record<string, unknown>)[single], slots[0], dests[0]);
      if (inner === null) return;
      fail(`backward: ${inner}`);
    }
    fail(`backward: ${message}`);
  }
  const nameList: string[] = [];
  const keyList: string[] = [];
  for (let i = 0; i < n; i++) {
    nameList[i] = slots[i].name;
    keyList[i] = slots[i].key;
  }
  const names = quotedList(nameList);
  let entries: unknown[];
  if (isArray(result)) {
    if (result.length !== n) {
      fail(`backward returned ${result.length} gradient${result.length === 1 ? '' : 's'} for ${n} parameters (${names})`);
    }
    entries = result;
  } else if (result !== null && typeof result === 'object' && !isView(result) && isPlainPrototype(getPrototypeOf(result))) {
    entries = [];
    const obj = result as Record<string, unknown>;
    for (let i = 0; i < n; i++) {
      const key = keyIn(obj, slots[i]);
      if (key === null) {
        fail(`backward result has no gradient '${slots[i].key}' (it has ${quotedList(objectKeys(obj)) || 'no keys'}; expected ${quotedList(keyList)})`);
      }
      entries[i] = obj[key];
    }
  } else {
    fail(`backward returned ${describeValue(result)}; expected ${n} gradients (${names}) as an array in declaration order or an object keyed by parameter name`);
  }
  for (let i = 0; i < n; i++) {
    const message = readGradient(entries[i], slots[i], dests[i]);
    if (message !== null) fail(`backward: ${message}${swapNote(entries, slots, i)}`);
  }
}
