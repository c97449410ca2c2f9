// When a method's backward returns fewer gradients than the op has parameters: which of the
// instance's own numeric fields the backward call changed, and, for each parameter whose gradient
// is missing, a changed field of the same size, so the message can name the `@gradientField`
// tags that would read them. Only a suggestion: the user decides whether a field holds a gradient.

import { F64, contains, findText, isArray, isView, lowerText, objectKeys, ownKey } from './builtins';
import { readGradient, shapeOf } from './gradients';
import type { ParamSlot } from './paramSlot';

type Instance = Record<string, unknown>;

/** A field's numbers, flattened row-major. */
interface FieldNumbers {
  name: string;
  values: Float64Array;
}

/** The numbers of a number, typed array or rectangular nested number[]; null for anything else. */
function numbersOf(v: unknown): Float64Array | null {
  if (typeof v === 'number') {
    const one = new F64(1);
    one[0] = v;
    return one;
  }
  if (isView(v)) {
    const arr = v as unknown as ArrayLike<unknown>;
    if (typeof arr.length !== 'number') return null;
    const out = new F64(arr.length);
    for (let i = 0; i < arr.length; i++) {
      const x = arr[i];
      if (typeof x !== 'number') return null;
      out[i] = x;
    }
    return out;
  }
  if (!isArray(v)) return null;
  const shape = shapeOf(v);
  if (shape === null) return null;
  let n = 1;
  for (let d = 0; d < shape.length; d++) n *= shape[d];
  const out = new F64(n);
  let k = 0;
  const walk = (x: unknown, dim: number): boolean => {
    if (!isArray(x) || x.length !== shape[dim]) return false;
    for (let i = 0; i < x.length; i++) {
      const e = x[i];
      if (dim < shape.length - 1) {
        if (!walk(e, dim + 1)) return false;
      } else if (typeof e === 'number') out[k++] = e;
      else return false;
    }
    return true;
  };
  return walk(v, 0) ? out : null;
}

/** Own enumerable fields holding numbers whose count is one of `sizes`; [] when the instance cannot be read. */
function numericFields(instance: Instance, sizes: number[] | null): FieldNumbers[] {
  const out: FieldNumbers[] = [];
  try {
    const keys = objectKeys(instance);
    for (let i = 0; i < keys.length; i++) {
      const values = numbersOf(instance[keys[i]]);
      if (values !== null && (sizes === null || contains(sizes, values.length))) out[out.length] = { name: keys[i], values };
    }
  } catch {
    return out; // a getter or Proxy that throws: no suggestion from what could not be read
  }
  return out;
}

function sameNumbers(a: Float64Array, b: Float64Array): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i] && !(a[i] !== a[i] && b[i] !== b[i])) return false;
  return true;
}

/** The instance's numeric fields before a backward call, to see which ones the call changed. */
export class FieldWatch {
  private constructor(
    private readonly before: FieldNumbers[],
    private readonly sizes: number[],
  ) {}

  /** Copies the fields whose element count is that of a differentiated parameter (others cannot be suggested). */
  static capture(instance: Instance, slots: ParamSlot[]): FieldWatch {
    const sizes: number[] = [];
    for (let s = 0; s < slots.length; s++) sizes[s] = slots[s].size;
    return new FieldWatch(numericFields(instance, sizes), sizes);
  }

  /** Fields whose numbers differ after the call (or that appeared in it), in key order. */
  changed(instance: Instance): FieldNumbers[] {
    const after = numericFields(instance, this.sizes);
    const out: FieldNumbers[] = [];
    for (let i = 0; i < after.length; i++) {
      let same = false;
      for (let k = 0; k < this.before.length; k++) if (this.before[k].name === after[i].name) same = sameNumbers(this.before[k].values, after[i].values);
      if (!same) out[out.length] = after[i];
    }
    return out;
  }
}

/**
 * Which slots a backward result supplies a gradient for, read leniently: an object by key, a
 * list of gradients entry by entry, anything else as the one gradient it fits first. The rest
 * are the missing ones the hint looks for.
 */
function suppliedSlots(result: unknown, slots: ParamSlot[]): boolean[] {
  const supplied: boolean[] = [];
  for (let s = 0; s < slots.length; s++) supplied[s] = false;
  const fits = (v: unknown, s: number): boolean => readGradient(v, slots[s], new F64(slots[s].size)) === null;
  const fitFirst = (v: unknown): void => {
    for (let s = 0; s < slots.length; s++) {
      if (!supplied[s] && fits(v, s)) {
        supplied[s] = true;
        return;
      }
    }
  };
  try {
    if (result === null || result === undefined) return supplied;
    if (typeof result === 'object' && !isArray(result) && !isView(result)) {
      const obj = result as Record<string, unknown>;
      for (let s = 0; s < slots.length; s++) {
        const key = ownKey(obj, slots[s].name) ? slots[s].name : ownKey(obj, slots[s].key) ? slots[s].key : null;
        if (key !== null && fits(obj[key], s)) supplied[s] = true;
      }
    } else if (isArray(result) && result.length > 0 && typeof result[0] !== 'number') {
      for (let i = 0; i < result.length; i++) fitFirst(result[i]);
    } else fitFirst(result);
  } catch {
    // A result that cannot be inspected supplies nothing the hint could rely on.
  }
  return supplied;
}

/** `a`, `a and b`, `a, b and c`. */
function andList(items: string[]): string {
  let out = '';
  for (let i = 0; i < items.length; i++) out += (i === 0 ? '' : i === items.length - 1 ? ' and ' : ', ') + items[i];
  return out;
}

/**
 * For each slot the result does not supply, a field the call changed with the same element count
 * (one whose name contains the parameter's own name first, e.g. `dW` for `this.W`), never one of
 * `excluded` (the op's sampled inputs and fields already read by a tag), each field at most once.
 * Returns the text to append to the message, or '' when nothing fits.
 */
export function gradientFieldHint(changed: FieldNumbers[], result: unknown, slots: ParamSlot[], excluded: string[]): string {
  const supplied = suppliedSlots(result, slots);
  const used: string[] = [];
  const said: string[] = [];
  const tags: string[] = [];
  for (let s = 0; s < slots.length; s++) {
    if (supplied[s]) continue;
    const slot = slots[s];
    const own = lowerText(slot.key);
    let pick: FieldNumbers | null = null;
    for (let i = 0; i < changed.length; i++) {
      const f = changed[i];
      if (f.values.length !== slot.size || contains(used, f.name) || contains(excluded, f.name)) continue;
      if (pick === null) pick = f;
      if (findText(lowerText(f.name), own) >= 0) {
        pick = f;
        break;
      }
    }
    if (pick === null) continue;
    used[used.length] = pick.name;
    const count = said.length === 0 ? `${pick.values.length} element${pick.values.length === 1 ? '' : 's'}` : `${pick.values.length}`;
    said[said.length] = `this.${pick.name} (${count}, like ${slot.name})`;
    tags[tags.length] = `\`@gradientField ${slot.name} this.${pick.name}\``;
  }
  if (said.length === 0) return '';
  const one = said.length === 1;
  return `the backward changed ${andList(said)}: if ${one ? 'it holds that gradient' : 'they hold those gradients'}, add ${andList(tags)}`;
}
