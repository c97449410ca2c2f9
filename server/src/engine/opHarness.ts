// Calls one op's forward and backward the way the interface describes (functions or methods on
// one instance, `this.FIELD` values, the backward's argument list), counts the calls, and turns
// every failure of user code into a message naming the part of the op at fault.

import { F64, describeThrown, describeValue, formatIndex, formatNumber, positionOf, reflectApply, reflectConstruct, sliceText } from './builtins';
import { CheckStop, fail, failInternal, failThrown, stopAtTimeLimit } from './failure';
import { ForwardMap } from './forwardMap';
import { resolveBindings, type AnyFunction } from './opBindings';
import { GradientSource } from './gradientFields';
import { InputGuard } from './inputGuard';
import { InstanceSnapshot } from './instanceState';
import { buildValue, describeOutputIndex, detectLayout, firstNonFinite, flattenInto, nonFiniteName, type OutputLayout } from './outputLayout';
import { unravelSlot, type ParamSlot } from './paramSlot';
import type { RandomSource } from './random';
import { drawSample, type Sample } from './sampling';
import { TensorBridge } from './tensorBridge';
import type { BackwardArg, CallCounts, CheckOutcome, OpDescriptor } from '../model/types';

export class OpHarness extends ForwardMap {
  readonly calls: CallCounts = { forward: 0, backward: 0 };
  private readonly forwardFn: AnyFunction;
  private readonly backwardFn: AnyFunction;
  private readonly classCtor: AnyFunction | null;
  private readonly constructFn: AnyFunction | null;
  private readonly samplesFn: AnyFunction | null;
  private instance: Record<string, unknown> | null = null;
  /** A fresh instance for the next backward call (prepareFreshInstanceForBackward), or null. */
  private backwardThis: Record<string, unknown> | null = null;
  /** The object literal holding the op's functions (`this` for their calls), or null. */
  private readonly holder: Record<string, unknown> | null;
  private sample: Sample | null = null;
  /** The inputs of the current attempt as captured for the report (set by the check). */
  capturedInputs: CheckOutcome['inputs'];
  /** The relative tolerance the current attempt judges with (set by takeBaseline), for ParamResult.tolerance. */
  appliedTolerance: number | undefined;
  /** Output shape, fixed by the first forward call (read it through outputLayout). */
  private layout: OutputLayout | null = null;
  /** Whether the backward receives `$dy`; when not, the forward returns a number. */
  readonly takesUpstream: boolean;
  /** Tensors in and out, and the library's gradient, for ops that work with TensorFlow.js. */
  private readonly tensors: TensorBridge | null;
  /** The hard stop (stopAfter): the clock, and the time after which no call of the op starts. */
  private stopClock: (() => number) | null = null;
  private stopTime = Infinity;
  private stopLimitMs = 0;
  private readonly gradientSource: GradientSource; // what the backward returns, and its @gradientField fields

  constructor(
    private readonly op: OpDescriptor,
    exposed: Record<string, unknown>,
  ) {
    super({ slot: null, index: 0, value: 0, several: false });
    let upstream = false;
    for (let i = 0; i < op.backwardArgs.length; i++) if (op.backwardArgs[i].kind === 'upstream') upstream = true;
    this.takesUpstream = upstream;
    this.tensors = TensorBridge.forOp(op, exposed);
    const b = resolveBindings(op, exposed);
    this.forwardFn = b.forwardFn;
    this.backwardFn = b.backwardFn;
    this.classCtor = b.classCtor;
    this.holder = b.holder;
    this.constructFn = b.constructFn;
    this.samplesFn = b.samplesFn;
    this.gradientSource = new GradientSource(op);
  }

  /**
   * The engine's last line before the sandbox's watchdog: after `time` (on `clock`), no call of
   * the op's forward or backward starts; the check stops with the time-limit outcome instead
   * (stoppedAtTimeLimit, stage 'forward calls'). Every phase checks its own, earlier budget
   * (outOfTime) where it can say how far it got; this catches a phase that runs on between its
   * checks (a kink ladder, a Ridders tableau) with a slow forward.
   */
  stopAfter(clock: () => number, time: number, timeLimitMs: number): void {
    this.stopClock = clock;
    this.stopTime = time;
    this.stopLimitMs = timeLimitMs;
  }

  private checkClock(): void {
    if (this.stopClock === null || !(this.stopClock() > this.stopTime)) return;
    const pr = this.perturbation.progress;
    if (pr !== undefined) {
      stopAtTimeLimit(`check of '${pr.param}' stopped at the time limit after ${pr.done} of ${pr.total} ${pr.unit}`, {
        param: pr.param,
        stage: pr.stage,
        done: pr.done,
        total: pr.total,
      });
    }
    const slot = this.perturbation.slot;
    const name = slot !== null ? slot.name : this.op.params.length > 0 ? this.op.params[0].name : this.op.forward;
    const calls = this.calls.forward + this.calls.backward;
    stopAtTimeLimit(`check of '${name}' stopped at the time limit of ${this.stopLimitMs} ms after ${calls} calls of the op`, {
      param: name,
      stage: 'forward calls',
      done: calls,
      total: calls,
    });
  }

  /** Creates the instance (methods) and draws the inputs of one attempt. */
  prepare(rng: RandomSource, maxElements: number): Sample {
    this.layout = null;
    if (this.classCtor !== null) this.instance = this.construct(this.classCtor);
    this.sample = drawSample(this.op, rng, this.instance, this.samplesFn as ((r: () => number) => unknown) | null, maxElements);
    if (this.tensors !== null && this.samplesFn !== null) this.tensors.adoptFactoryTensors(this.sample, this.op.fixed ?? []);
    return this.sample;
  }

  /**
   * Uses another harness's drawn inputs, instance and output layout, so a second function of
   * the same forward (the @backward of a @hessian op) is called at the very same point.
   */
  adoptSample(other: OpHarness): void {
    this.sample = other.sample;
    this.instance = other.instance;
    this.layout = other.layout;
  }

  /** A new instance from @construct or `new Class()`. */
  private construct(cls: AnyFunction): Record<string, unknown> {
    let inst: unknown;
    const className = this.op.target.className ?? '';
    try {
      inst = this.constructFn !== null ? reflectApply(this.constructFn, undefined, []) : reflectConstruct(cls, []);
    } catch (e) {
      failThrown(this.constructFn !== null ? `@construct ${this.op.target.constructFactory} threw ${describeThrown(e)}` : `new ${className}() threw ${describeThrown(e)}`, e);
    }
    if (inst === null || typeof inst !== 'object') {
      fail(`${this.constructFn !== null ? `@construct ${this.op.target.constructFactory}` : `new ${className}()`} gave ${describeValue(inst)}, expected an instance`);
    }
    return inst as Record<string, unknown>;
  }

  /** Whether each backward call gets a fresh instance (state in `#private` fields cannot be snapshot). */
  get renewsInstance(): boolean {
    return this.classCtor !== null && this.op.target.renewInstance === true;
  }

  /**
   * For the next backward call only: a fresh instance with the sampled field values (the same
   * objects) on which the forward has run at the sample point, so the backward sees exactly the
   * state a forward leaves, also in `#private` fields.
   */
  prepareFreshInstanceForBackward(scratch: Float64Array): void {
    const inst = this.construct(this.classCtor as AnyFunction);
    const s = this.sample as Sample;
    const current = this.instance as Record<string, unknown>;
    for (let i = 0; i < s.fields.length; i++) inst[s.fields[i].field] = current[s.fields[i].field];
    this.checkClock();
    this.calls.forward++;
    let raw: unknown;
    try {
      raw = this.tensors !== null ? this.tensors.callForward(this.forwardFn, inst, this.args) : reflectApply(this.forwardFn, inst, this.args);
    } catch (e) {
      failThrown(`forward threw ${this.whereText()}: ${describeThrown(e)}`, e);
    }
    flattenInto(raw, this.outputLayout, scratch);
    this.backwardThis = inst;
  }

  get outputLayout(): OutputLayout {
    if (this.layout === null) return failInternal('the output layout was read before the first forward call');
    return this.layout;
  }

  private get args(): unknown[] {
    return (this.sample as Sample).args;
  }

  /** A guard over every input (arguments, then fields), to detect a call that changes them. */
  guardInputs(): InputGuard {
    const s = this.sample as Sample;
    const names: string[] = [];
    for (let i = 0; i < s.argNames.length; i++) names[i] = s.argNames[i];
    for (let i = 0; i < s.fields.length; i++) names[names.length] = `this.${s.fields[i].field}`;
    return new InputGuard(names, this.inputValues());
  }

  /** Current values of every input, in the guard's order. */
  inputValues(): unknown[] {
    const s = this.sample as Sample;
    const values: unknown[] = [];
    for (let i = 0; i < s.args.length; i++) values[i] = s.args[i];
    for (let i = 0; i < s.fields.length; i++) values[values.length] = (this.instance as Record<string, unknown>)[s.fields[i].field];
    return values;
  }

  private whereText(): string {
    const p = this.perturbation;
    if (p.slot === null) return 'at the sample point';
    if (p.several) return `with several elements of '${p.slot.name}' moved`;
    return `with ${p.slot.name}${p.slot.shape.length ? formatIndex(unravelSlot(p.slot, p.index)) : ''} = ${formatNumber(p.value, 8)}`;
  }

  /** Calls the forward with the current inputs and returns what it returned. */
  forwardRaw(): unknown {
    this.checkClock();
    this.calls.forward++;
    try {
      if (this.tensors !== null) return this.tensors.callForward(this.forwardFn, this.instance ?? this.holder ?? undefined, this.args);
      return reflectApply(this.forwardFn, this.instance ?? this.holder ?? undefined, this.args);
    } catch (e) {
      if (e instanceof CheckStop) throw e;
      return failThrown(`forward threw ${this.whereText()}: ${describeThrown(e)}`, e);
    }
  }

  /**
   * Calls the forward and copies its output into dest (allocated on the first call). With
   * `requireFinite`, NaN or Infinity is an error naming the output index.
   */
  forwardInto(dest: Float64Array | null, requireFinite: boolean): Float64Array {
    const raw = this.forwardRaw();
    if (this.layout === null) {
      try {
        this.layout = detectLayout(raw);
      } catch (e) {
        if (e instanceof CheckStop) throw e;
        failThrown(`reading the forward output threw ${describeThrown(e)}`, e);
      }
      if (this.layout.size === 0) fail('forward output is empty');
    }
    const out = dest ?? new F64(this.layout.size);
    try {
      flattenInto(raw, this.layout, out);
    } catch (e) {
      if (e instanceof CheckStop) throw e;
      failThrown(`reading the forward output threw ${describeThrown(e)}`, e);
    }
    if (requireFinite) {
      const j = firstNonFinite(out);
      if (j >= 0) fail(`forward output has ${nonFiniteName(out[j])} at ${describeOutputIndex(this.layout, j)} ${this.whereText()}`);
    }
    return out;
  }

  /** Backward's argument list for an upstream gradient (flat, output-shaped) at output y. */
  private backwardArgs(dy: Float64Array | null, y: Float64Array, placeholder?: (a: BackwardArg) => unknown): unknown[] {
    const s = this.sample as Sample;
    const list: unknown[] = [];
    const layout = this.outputLayout;
    for (let i = 0; i < this.op.backwardArgs.length; i++) {
      const a = this.op.backwardArgs[i];
      if (a.kind === 'upstream') list[i] = buildValue(layout, dy as Float64Array);
      else if (a.kind === 'output') list[i] = buildValue(layout, y);
      else if (a.kind === 'tangent' || a.kind === 'vector') list[i] = placeholder ? placeholder(a) : undefined;
      else {
        const name = a.name;
        const pos = positionOf(s.argNames, name);
        if (pos >= 0) list[i] = s.args[pos];
        else {
          const field = sliceText(name, 0, 5) === 'this.' ? sliceText(name, 5) : name;
          let found = false;
          for (let k = 0; k < s.fields.length; k++) {
            if (s.fields[k].field === field) {
              list[i] = (this.instance as Record<string, unknown>)[field];
              found = true;
            }
          }
          if (!found) fail(`@backward argument '${name}' is not a parameter of the forward`);
        }
      }
    }
    return list;
  }

  /**
   * Calls the backward at the sample point with upstream gradient dy (null when the backward
   * takes no `$dy`) and reads the gradients into dests (one per slot), checking them finite.
   */
  backwardInto(dy: Float64Array | null, y: Float64Array, slots: ParamSlot[], dests: Float64Array[]): void {
    const list = this.backwardArgs(dy, y);
    // `$dy` and `$y` are built fresh for each call; a backward that changes them in place
    // (and perhaps returns them) is reported like one that changes `x` or `this.w`.
    const madeNames: string[] = [];
    const madeValues: unknown[] = [];
    for (let i = 0; i < this.op.backwardArgs.length; i++) {
      const a = this.op.backwardArgs[i];
      if (a.kind === 'upstream' || a.kind === 'output') {
        madeNames[madeNames.length] = a.kind === 'upstream' ? '$dy' : '$y';
        madeValues[madeValues.length] = list[i];
      }
    }
    const madeGuard = madeNames.length > 0 ? new InputGuard(madeNames, madeValues) : null;
    this.checkClock();
    this.calls.backward++;
    let result: unknown;
    const thisArg = this.op.target.backwardIsMethod ? (this.backwardThis ?? this.instance ?? this.holder ?? undefined) : undefined;
    // The instance the backward runs on, as the caller put it back: its gradient fields are zeroed.
    const instance = this.backwardThis ?? this.instance;
    this.backwardThis = null;
    this.gradientSource.beforeCall(instance, slots);
    try {
      if (this.tensors !== null && this.op.target.libraryGradient) {
        const names: string[] = [];
        for (let p = 0; p < slots.length; p++) names[p] = slots[p].name;
        // Without $dy the forward returns a number: its plain gradient is the one for dy = 1.
        let upstream = dy;
        if (upstream === null) {
          upstream = new F64(y.length);
          for (let j = 0; j < y.length; j++) upstream[j] = 1;
        }
        result = this.tensors.libraryGradient(this.forwardFn, this.args, names, upstream);
      } else if (this.tensors !== null) result = this.tensors.callBackward(this.backwardFn, thisArg, list, this.op.backwardArgs);
      else result = reflectApply(this.backwardFn, thisArg, list);
    } catch (e) {
      if (e instanceof CheckStop) throw e;
      failThrown(`backward threw: ${describeThrown(e)}`, e);
    }
    if (madeGuard !== null) {
      const changed = madeGuard.firstChange(madeValues);
      if (changed !== null) fail(`backward changed its input ${changed} (the upstream gradient and the output are the check's, not the backward's to reuse: return a new array)`);
    }
    this.gradientSource.read(result, instance, slots, dests);
    for (let p = 0; p < slots.length; p++) {
      const j = firstNonFinite(dests[p]);
      if (j >= 0) {
        const where = slots[p].shape.length ? ` at index ${formatIndex(unravelSlot(slots[p], j))}` : '';
        fail(`gradient of '${slots[p].name}' has ${nonFiniteName(dests[p][j])}${where}${this.tensors !== null ? this.tensors.upstreamNote() : ''}`);
      }
    }
  }

  /**
   * Calls the op's derivative function (`@jacobian`, `@tangent`, `@hessian`) at the sample point
   * with output y; `placeholder` gives the values of `$dNAME` and `$v`. Returns what it returned.
   */
  derivativeRaw(y: Float64Array, placeholder: (a: BackwardArg) => unknown): unknown {
    const list = this.backwardArgs(null, y, placeholder);
    this.checkClock();
    this.calls.backward++;
    try {
      return reflectApply(this.backwardFn, this.op.target.backwardIsMethod ? (this.instance ?? this.holder ?? undefined) : undefined, list);
    } catch (e) {
      return fail(`${this.op.kind ?? 'backward'} threw: ${describeThrown(e)}`);
    }
  }

  /** The instance's state now (after a forward at the sample point), to restore before backward calls. */
  snapshotInstance(): InstanceSnapshot | null {
    return this.instance === null ? null : new InstanceSnapshot(this.instance);
  }

  /** Whether the backward runs on the instance after the forward (it may read cached state). */
  get backwardNeedsFreshForward(): boolean {
    return this.op.target.kind === 'method';
  }
}
