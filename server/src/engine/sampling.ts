// Draws an op's inputs from its `@sample` specs (or calls its `@samples` factory) with the
// seeded generator, keeps `avoid` points at a margin, and wraps every differentiated parameter
// in a ParamSlot.

import {
  abs,
  isF32,
  isF64,
  newOpF32,
  newOpF64,
  newOpI32,
  contains,
  describeThrown,
  sliceText,
  describeValue,
  formatNumber,
  isArray,
  isFiniteNumber,
  isInteger,
  max,
  min,
  newOpList,
  parseJsonForOp,
  reflectApply,
  stringifyJson,
} from './builtins';
import { fail, failThrown } from './failure';
import { nestedShape } from './outputLayout';
import { ParamSlot, nestedLeaves, precisionOf } from './paramSlot';
import { avoidMargin, roundTo, type Precision } from './precision';
import { uniform, uniformInt, type RandomSource } from './random';
import type { OpDescriptor, ParamDescriptor, SampleDtype, SampleSpec } from '../model/types';

/** The drawn inputs of one check attempt. */
export interface Sample {
  /** The forward's argument list, in order. */
  args: unknown[];
  /** Names of the positional parameters (same order as args). */
  argNames: string[];
  /** `this.FIELD` values set on the instance, by field name. */
  fields: { field: string; value: unknown }[];
  /** Differentiated parameters in declaration order (positional first, then fields). */
  slots: ParamSlot[];
}

/** Draws per element before giving up on keeping away from the avoid points. */
const AVOID_TRIES = 64;

type RandomSpec = Extract<SampleSpec, { kind: 'random' }>;

function drawElement(random: RandomSource, spec: RandomSpec, precision: Precision): number {
  const lo = spec.range[0];
  const hi = spec.range[1];
  let best = roundTo(precision, uniform(random, lo, hi));
  if (spec.avoid.length === 0) return best;
  let bestSlack = -Infinity;
  for (let t = 0; t < AVOID_TRIES; t++) {
    const v = t === 0 ? best : roundTo(precision, uniform(random, lo, hi));
    let slack = Infinity; // distance beyond the margin to the nearest avoid point
    for (let k = 0; k < spec.avoid.length; k++) {
      const p = spec.avoid[k];
      // The margin may not exceed a quarter of the range, or a narrow range could never satisfy it.
      const margin = min(avoidMargin(precision, p), (hi - lo) / 4);
      slack = min(slack, abs(v - p) - margin);
    }
    if (slack >= 0) return v;
    if (slack > bestSlack) {
      bestSlack = slack;
      best = v;
    }
  }
  return best; // the range leaves no room: the kink test will see it
}

function validateSpec(name: string, spec: RandomSpec, maxElements: number): number {
  const lo = spec.range[0];
  const hi = spec.range[1];
  if (!isFiniteNumber(lo) || !isFiniteNumber(hi) || lo > hi) {
    fail(`@sample ${name}: range [${formatNumber(lo)}, ${formatNumber(hi)}] is not a finite interval with lo ≤ hi`);
  }
  let size = 1;
  for (let d = 0; d < spec.shape.length; d++) {
    const s = spec.shape[d];
    if (!isInteger(s) || s <= 0) fail(`@sample ${name}: dimension ${d + 1} is ${formatNumber(s)}, not a positive integer`);
    size *= s;
  }
  if (size > maxElements) fail(`@sample ${name}: ${size} elements exceed the limit of ${maxElements}`);
  return size;
}

function drawNested(random: RandomSpec, rng: RandomSource, shape: number[], dim: number, precision: Precision, ints: boolean): unknown[] {
  const out = newOpList();
  for (let i = 0; i < shape[dim]; i++) {
    if (dim === shape.length - 1) {
      out[i] = ints ? uniformInt(rng, random.range[0], random.range[1]) : drawElement(rng, random, precision);
    } else out[i] = drawNested(random, rng, shape, dim + 1, precision, ints);
  }
  return out;
}

/** Draws one value for a spec. */
export function drawValue(name: string, spec: SampleSpec, rng: RandomSource, maxElements: number): unknown {
  if (spec.kind === 'literal') {
    // A fresh copy per attempt, so an op that changes it cannot affect the next attempt.
    return spec.value === undefined ? undefined : parseJsonForOp(stringifyJson(spec.value));
  }
  const size = validateSpec(name, spec, maxElements);
  const ints = spec.dtype === 'i32' || spec.dtype === 'int';
  const precision: Precision = spec.dtype === 'f32' ? 'f32' : 'f64';
  if (spec.dtype === 'f64' || spec.dtype === 'f32' || spec.dtype === 'i32') {
    if (spec.shape.length === 0 && spec.dtype !== 'i32') return drawElement(rng, spec, precision);
    const arr = spec.dtype === 'f64' ? newOpF64(size) : spec.dtype === 'f32' ? newOpF32(size) : newOpI32(size);
    if (!ints && spec.avoid.length === 0) {
      // drawElement without avoid points, written out (the array's storage does the float32
      // rounding): the same numbers with one call per element, not four.
      const lo = spec.range[0];
      const span = spec.range[1] - lo;
      for (let i = 0; i < size; i++) arr[i] = lo + span * rng();
      return arr;
    }
    for (let i = 0; i < size; i++) arr[i] = ints ? uniformInt(rng, spec.range[0], spec.range[1]) : drawElement(rng, spec, precision);
    return arr;
  }
  if (spec.shape.length === 0) return ints ? uniformInt(rng, spec.range[0], spec.range[1]) : drawElement(rng, spec, precision);
  return drawNested(spec, rng, spec.shape, 0, precision, ints);
}

function isDifferentiableDtype(dtype: SampleDtype): boolean {
  return dtype === 'f64' || dtype === 'f32' || dtype === 'num';
}

/** A slot for a value when it holds differentiable numbers, else null. */
function slotFor(
  param: ParamDescriptor,
  value: unknown,
  dtype: SampleDtype,
  host: Record<string | number, unknown>,
  hostKey: string | number,
  range: [number, number] | null,
  avoid: number[],
): ParamSlot | null {
  const key = param.isField ? sliceText(param.name, 5) : param.name;
  if (typeof value === 'number') {
    return new ParamSlot(param.name, key, dtype, precisionOf(dtype, value), [], 1, host, hostKey, null, range, avoid);
  }
  if (isF64(value) || isF32(value)) {
    const shape = param.sample?.kind === 'random' && param.sample.shape.length > 0 ? param.sample.shape : [value.length];
    return new ParamSlot(param.name, key, isF32(value) ? 'f32' : 'f64', precisionOf(dtype, value), shape, value.length, host, hostKey, value, range, avoid);
  }
  if (isArray(value)) {
    let shape: number[];
    try {
      shape = nestedShape(value, param.name);
    } catch {
      return null; // not an array of numbers: passed through, not differentiated
    }
    let size = 1;
    for (let d = 0; d < shape.length; d++) size *= shape[d];
    if (size === 0) return null;
    const leaves = nestedLeaves(value, shape);
    for (let r = 0; r < leaves.length; r++) {
      const leaf = leaves[r];
      if (!isArray(leaf) || leaf.length !== shape[shape.length - 1]) return null;
      for (let c = 0; c < leaf.length; c++) if (typeof leaf[c] !== 'number') return null;
    }
    return new ParamSlot(param.name, key, 'num', 'f64', shape, size, host, hostKey, leaves, range, avoid);
  }
  return null;
}

/**
 * Draws all inputs of an op. `instance` receives the `this.FIELD` values (null for function
 * ops); `samplesFactory` is the resolved `@samples` function when the op uses one.
 */
export function drawSample(
  op: OpDescriptor,
  rng: RandomSource,
  instance: Record<string, unknown> | null,
  samplesFactory: ((random: () => number) => unknown) | null,
  maxElements: number,
): Sample {
  const positional: ParamDescriptor[] = [];
  const fieldParams: ParamDescriptor[] = [];
  for (let i = 0; i < op.params.length; i++) {
    const p = op.params[i];
    if (p.isField) fieldParams[fieldParams.length] = p;
    else positional[positional.length] = p;
  }
  const fixed = op.fixed ?? [];
  const args: unknown[] = [];
  const argNames: string[] = [];
  const slots: ParamSlot[] = [];

  if (samplesFactory !== null) {
    let produced: unknown;
    const random = (): number => rng();
    try {
      produced = reflectApply(samplesFactory, undefined, [random]);
    } catch (e) {
      failThrown(`@samples ${op.target.samplesFactory}: threw ${describeThrown(e)}`, e);
    }
    if (!isArray(produced)) fail(`@samples ${op.target.samplesFactory}: returned ${describeValue(produced)}, expected the argument list (an array)`);
    const list = produced as unknown[];
    if (list.length !== positional.length) {
      fail(`@samples ${op.target.samplesFactory}: returned ${list.length} argument${list.length === 1 ? '' : 's'}, the forward takes ${positional.length}`);
    }
    for (let i = 0; i < positional.length; i++) {
      const p = positional[i];
      args[i] = list[i];
      argNames[i] = p.name;
      if (contains(fixed, p.name)) continue;
      const v = list[i];
      const dtype: SampleDtype = isF32(v) ? 'f32' : isF64(v) ? 'f64' : 'num';
      if (typeof v === 'number' && !isFiniteNumber(v)) fail(`@samples ${op.target.samplesFactory}: argument '${p.name}' is ${formatNumber(v)}`);
      const slot = slotFor(p, v, dtype, args as unknown as Record<number, unknown>, i, null, []);
      if (slot !== null) slots[slots.length] = slot;
    }
  } else {
    for (let i = 0; i < positional.length; i++) {
      const p = positional[i];
      argNames[i] = p.name;
      if (p.sample === undefined && p.hasDefault === true) {
        args[i] = undefined; // the forward's default value applies
        continue;
      }
      if (p.sample === undefined) fail(`parameter '${p.name}' has no @sample`);
      args[i] = drawValue(p.name, p.sample, rng, maxElements);
      const spec = p.sample;
      if (spec.kind === 'random' && !spec.fixed && !contains(fixed, p.name) && isDifferentiableDtype(spec.dtype)) {
        const slot = slotFor(p, args[i], spec.dtype, args as unknown as Record<number, unknown>, i, spec.range, spec.avoid);
        if (slot !== null) slots[slots.length] = slot;
      }
    }
  }

  const fields: { field: string; value: unknown }[] = [];
  for (let i = 0; i < fieldParams.length; i++) {
    const p = fieldParams[i];
    const field = sliceText(p.name, 5);
    if (instance === null) fail(`@sample ${p.name}: 'this.' fields need a method op`);
    if (p.sample === undefined) fail(`field '${p.name}' has no @sample`);
    const value = drawValue(p.name, p.sample, rng, maxElements);
    instance[field] = value;
    fields[fields.length] = { field, value };
    const spec = p.sample;
    if (spec.kind === 'random' && !spec.fixed && !contains(fixed, p.name) && isDifferentiableDtype(spec.dtype)) {
      const slot = slotFor(p, value, spec.dtype, instance, field, spec.range, spec.avoid);
      if (slot !== null) slots[slots.length] = slot;
    }
  }
  return { args, argNames, fields, slots };
}

/** Distance from x to the nearest avoid point or range end of the slot (Infinity when none). */
export function distanceToBarrier(slot: ParamSlot, x: number): number {
  let d = Infinity;
  for (let k = 0; k < slot.avoid.length; k++) d = min(d, abs(x - slot.avoid[k]));
  if (slot.range !== null && slot.range[0] < slot.range[1] && x >= slot.range[0] && x <= slot.range[1]) {
    d = min(d, max(x - slot.range[0], 0), max(slot.range[1] - x, 0));
  }
  return d;
}
