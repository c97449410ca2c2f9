// Where a backward's gradients come from: what it returns, and for each parameter named by
// `@gradientField PARAM this.FIELD` the instance's field. Before every backward call the field is
// set to zero in place, as a training loop zeroes its gradients between steps, so a backward that
// accumulates (`this.dW[k] += ...`) and one that assigns give the same gradient. A method's
// backward whose result does not fit gets the fields it changed named in the message.

import { CheckStop, fail, failThrown } from './failure';
import { describeThrown, isArray, isView, sliceText } from './builtins';
import { FieldWatch, gradientFieldHint } from './fieldChanges';
import { readGradient, readGradients } from './gradients';
import type { ParamSlot } from './paramSlot';
import type { GradientField, OpDescriptor } from '../model/types';

type Instance = Record<string, unknown>;

/** Deepest nesting of a number[] field that zeroing walks (a gradient has a few dimensions; our choice). */
const MAX_ZERO_DEPTH = 8;

/** Sets every number of a typed array or nested number[] to 0 in place. */
function zeroInPlace(v: unknown, depth: number): void {
  if (isView(v)) {
    const arr = v as unknown as { [i: number]: unknown; length: number };
    const n = arr.length;
    if (typeof n === 'number') for (let i = 0; i < n; i++) if (typeof arr[i] === 'number') arr[i] = 0;
    return;
  }
  if (!isArray(v) || depth >= MAX_ZERO_DEPTH) return;
  for (let i = 0; i < v.length; i++) {
    if (typeof v[i] === 'number') v[i] = 0;
    else zeroInPlace(v[i], depth + 1);
  }
}

export class GradientSource {
  private readonly fields: GradientField[];
  /** Own fields of a method op that are the check's inputs (never suggested as gradients). */
  private readonly inputFields: string[] = [];
  /** Whether a failed read may name changed fields: a method op, until one read succeeds. */
  private watching: boolean;
  private watch: FieldWatch | null = null;

  constructor(op: OpDescriptor) {
    this.fields = op.gradientFields ?? [];
    this.watching = op.target.kind === 'method' && op.target.libraryGradient !== true;
    for (let i = 0; i < op.params.length; i++) if (op.params[i].isField) this.inputFields[this.inputFields.length] = sliceText(op.params[i].name, 5);
    for (let i = 0; i < this.fields.length; i++) this.inputFields[this.inputFields.length] = this.fields[i].field;
  }

  /** Right before a backward call on `instance` (after its state was put back): zero the gradient fields. */
  beforeCall(instance: Instance | null, slots: ParamSlot[]): void {
    for (let i = 0; i < this.fields.length; i++) {
      const gf = this.fields[i];
      if (instance === null) fail(`@gradientField ${gf.param} this.${gf.field}: the op has no instance to hold the field (the tag needs a method op)`);
      try {
        const v = instance[gf.field];
        if (typeof v === 'number') instance[gf.field] = 0;
        else zeroInPlace(v, 0);
      } catch (e) {
        failThrown(`@gradientField ${gf.param} this.${gf.field}: setting the field to zero before the backward call threw ${describeThrown(e)}`, e);
      }
    }
    this.watch = this.watching && instance !== null ? FieldWatch.capture(instance, slots) : null;
  }

  /** After the call: the returned gradients and the fields' into dests (one per slot, in slot order). */
  read(result: unknown, instance: Instance | null, slots: ParamSlot[], dests: Float64Array[]): void {
    if (this.fields.length === 0) this.readReturned(result, instance, slots, dests);
    else {
      const returnedSlots: ParamSlot[] = [];
      const returnedDests: Float64Array[] = [];
      for (let s = 0; s < slots.length; s++) {
        if (this.fieldOf(slots[s].name) !== null) continue;
        returnedSlots[returnedSlots.length] = slots[s];
        returnedDests[returnedDests.length] = dests[s];
      }
      // With every gradient in a field, what the backward returns is not read (void is fine).
      if (returnedSlots.length > 0) this.readReturned(result, instance, returnedSlots, returnedDests);
      for (let i = 0; i < this.fields.length; i++) {
        const gf = this.fields[i];
        let s = 0;
        while (s < slots.length && slots[s].name !== gf.param) s++;
        if (s === slots.length) fail(`@gradientField ${gf.param} this.${gf.field}: '${gf.param}' is not differentiated in this check, so it has no gradient to read`);
        this.readField(gf, instance, slots[s], dests[s]);
      }
    }
    this.watching = false;
    this.watch = null;
  }

  private fieldOf(param: string): GradientField | null {
    for (let i = 0; i < this.fields.length; i++) if (this.fields[i].param === param) return this.fields[i];
    return null;
  }

  private readReturned(result: unknown, instance: Instance | null, slots: ParamSlot[], dests: Float64Array[]): void {
    try {
      readGradients(result, slots, dests);
    } catch (e) {
      if (!(e instanceof CheckStop)) failThrown(`reading what the backward returned threw ${describeThrown(e)}`, e);
      if (this.watch === null || instance === null || e.verdict !== 'error' || e.thrown !== undefined || e.constructor !== CheckStop) throw e;
      const hint = gradientFieldHint(this.watch.changed(instance), result, slots, this.inputFields);
      throw hint === '' ? e : new CheckStop('error', `${e.message}; ${hint}`);
    }
  }

  private readField(gf: GradientField, instance: Instance | null, slot: ParamSlot, dest: Float64Array): void {
    const field = `this.${gf.field}`;
    let value: unknown;
    try {
      value = instance === null ? undefined : instance[gf.field];
    } catch (e) {
      failThrown(`@gradientField ${gf.param} ${field}: reading the field after the backward call threw ${describeThrown(e)}`, e);
    }
    if (value === undefined) {
      fail(`@gradientField ${gf.param} ${field}: the instance has no field '${gf.field}' after the backward call; the backward must leave the gradient of '${gf.param}' there`);
    }
    const message = readGradient(value, slot, dest, `${field} (the gradient of '${gf.param}', @gradientField)`);
    if (message !== null) fail(message);
  }
}
