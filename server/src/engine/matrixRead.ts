// Reads the matrices a @jacobian or @hessian function returns (number[][] or a flat row-major
// typed array; one per parameter as an array or an object keyed by name), and names the
// expected and the found shape when a result does not fit — including a matrix returned
// transposed.

import { F64, describeValue, formatIndex, getPrototypeOf, isArray, isView, objectKeys, ownKey, quotedList, isPlainPrototype } from './builtins';
import { fail } from './failure';
import { shapeOf } from './gradients';
import type { ParamSlot } from './paramSlot';

function product(shape: number[]): number {
  let n = 1;
  for (let i = 0; i < shape.length; i++) n *= shape[i];
  return n;
}

/** Copies a rectangular nested number[] row-major into dest; false when ragged or not numbers. */
function copyNested(v: unknown, dest: Float64Array, pos: { i: number }): boolean {
  if (!isArray(v)) return false;
  for (let k = 0; k < v.length; k++) {
    const x = v[k];
    if (typeof x === 'number') {
      if (pos.i >= dest.length) return false;
      dest[pos.i++] = x;
    } else if (!copyNested(x, dest, pos)) return false;
  }
  return true;
}

/**
 * Reads an m×n matrix (row-major) from `value`, or fails with `label` and both shapes.
 * Accepted: number[][] of m rows of n numbers (a parameter of several dimensions may keep its
 * own shape after the row index), a flat typed array or number[] of m·n numbers, and a number
 * for a 1×1 matrix. `rowsText`/`colsText` say what rows and columns are, for messages.
 */
export function readMatrix(value: unknown, m: number, n: number, label: string, rowsText: string, colsText: string): Float64Array {
  const dest = new F64(m * n);
  const expected = `${m}×${n} (${rowsText} × ${colsText})`;
  if (typeof value === 'number') {
    if (m * n === 1) {
      dest[0] = value;
      return dest;
    }
    fail(`${label} is a number, expected a ${expected} matrix`);
  }
  if (isView(value)) {
    const arr = value as unknown as ArrayLike<number>;
    if (typeof arr.length !== 'number' || (arr.length > 0 && typeof arr[0] !== 'number')) fail(`${label} is ${describeValue(value)}, expected numbers`);
    if (arr.length !== m * n) fail(`${label} has ${arr.length} elements, expected a ${expected} matrix (${m * n} elements, row-major)`);
    for (let i = 0; i < m * n; i++) dest[i] = arr[i];
    return dest;
  }
  const shape = shapeOf(value);
  if (shape === null) fail(`${label} is ${describeValue(value)}, expected a ${expected} matrix as number[][] or a flat row-major typed array`);
  const flat = shape.length === 1 && shape[0] === m * n;
  const rowsFirst = shape.length >= 2 && shape[0] === m && product(shape) === m * n;
  if (!flat && !rowsFirst) {
    const transposed = shape.length === 2 && shape[0] === n && shape[1] === m && m !== n;
    fail(
      `${label} has shape ${formatIndex(shape)}, expected ${formatIndex([m, n])}: ${expected}` +
        (transposed ? ' — it looks transposed: rows must be outputs, columns parameter elements' : ''),
    );
  }
  if (!copyNested(value, dest, { i: 0 })) fail(`${label} is a ragged or non-numeric array, expected a ${expected} matrix`);
  return dest;
}

/**
 * Splits a result into one part per slot: the result itself for one slot (or a one-entry list,
 * or an object with the slot's key), else an array in declaration order or an object keyed by
 * name. `what` names the function for messages (`jacobian 'reachJ'`).
 */
export function splitParts(result: unknown, slots: ParamSlot[], what: string, partText: string): unknown[] {
  const n = slots.length;
  const parts: unknown[] = [];
  const plainObject = result !== null && typeof result === 'object' && !isArray(result) && !isView(result) && isPlainPrototype(getPrototypeOf(result));
  if (n === 1) {
    if (plainObject && ownKey(result as object, slots[0].key)) parts[0] = (result as Record<string, unknown>)[slots[0].key];
    else parts[0] = result;
    return parts;
  }
  const names: string[] = [];
  const keys: string[] = [];
  for (let i = 0; i < n; i++) {
    names[i] = slots[i].name;
    keys[i] = slots[i].key;
  }
  if (isArray(result)) {
    if (result.length !== n)
      fail(
        `${what} returned ${result.length} ${partText}${result.length === 1 ? '' : 's'} for ${n} parameters (${quotedList(names)}); expected one per parameter, in declaration order`,
      );
    for (let i = 0; i < n; i++) parts[i] = result[i];
    return parts;
  }
  if (plainObject) {
    const obj = result as Record<string, unknown>;
    for (let i = 0; i < n; i++) {
      if (!ownKey(obj, keys[i])) fail(`${what} result has no ${partText} '${keys[i]}' (it has ${quotedList(objectKeys(obj)) || 'no keys'}; expected ${quotedList(keys)})`);
      parts[i] = obj[keys[i]];
    }
    return parts;
  }
  return fail(`${what} returned ${describeValue(result)}; expected ${n} ${partText}s (${quotedList(names)}) as an array in declaration order or an object keyed by parameter name`);
}
