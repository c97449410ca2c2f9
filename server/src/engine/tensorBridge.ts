// Ops that work with TensorFlow.js: tensor parameters get float32 tensors of the sampled shape
// made with the module's own copy of the library, tensor results are read back into arrays, and
// `@backward library-gradient` asks the library's own gradient call (`grads`, with the upstream
// gradient as `dy`). Every call runs in the library's `tidy` scope, so each tensor made during
// it (inputs, intermediates, outputs, gradients) is disposed when it returns.

import { F32, F64, contains, copyList, describeThrown, describeValue, formatIndex, isArray, isView, objectKeys, positionOf, reflectApply, newOpF32, newOpI32 } from './builtins';
import { CheckStop, fail } from './failure';
import { ParamSlot } from './paramSlot';
import type { Sample } from './sampling';
import type { BackwardArg, OpDescriptor } from '../model/types';
import { TENSOR_LIBRARY_BINDING } from '../model/types';

type AnyFunction = (...args: unknown[]) => unknown;

interface Tensor {
  shape: number[];
  dtype: string;
  dataSync(): ArrayLike<number>;
}

/** The parts of the library's namespace the bridge calls. */
interface TensorLibrary {
  tensor: (values: unknown, shape?: number[], dtype?: string) => Tensor;
  tidy: (fn: () => void) => unknown;
  grads?: (f: AnyFunction) => (xs: Tensor[], dy?: Tensor) => Tensor[];
}

/** A tensor of any copy of the library: the class is not shared, so it is recognised by its members. */
export function isTensor(v: unknown): v is Tensor {
  if (v === null || typeof v !== 'object') return false;
  const t = v as { dataSync?: unknown; shape?: unknown; dtype?: unknown };
  return typeof t.dataSync === 'function' && isArray(t.shape) && typeof t.dtype === 'string';
}

/** A tensor's values as a fresh array of this realm: float32 stays Float32Array, rank 0 becomes a number. */
function readTensor(t: Tensor): unknown {
  const data = t.dataSync();
  if (t.shape.length === 0) return data[0];
  const out = t.dtype === 'float32' ? new F32(data.length) : new F64(data.length);
  for (let i = 0; i < data.length; i++) out[i] = data[i];
  return out;
}

export class TensorBridge {
  /** Shape of the forward's tensor output, from the latest forward call; null when it returned no tensor. */
  private outputShape: number[] | null = null;
  /** Per forward parameter: the tensor shape and element type to make, or null for a plain value. */
  private readonly tensorParams: ({ shape: number[] | null; dtype: 'float32' | 'int32' } | null)[] = [];
  private readonly paramNames: string[] = [];

  private constructor(
    private readonly lib: TensorLibrary,
    op: OpDescriptor,
  ) {
    for (let i = 0; i < op.params.length; i++) {
      const p = op.params[i];
      if (p.isField) continue;
      this.paramNames[this.paramNames.length] = p.name;
      const spec = p.sample;
      let entry: { shape: number[] | null; dtype: 'float32' | 'int32' } | null = null;
      if (p.tensor) {
        const ints = spec?.kind === 'random' && (spec.dtype === 'i32' || spec.dtype === 'int');
        entry = { shape: spec?.kind === 'random' ? copyList(spec.shape) : null, dtype: ints ? 'int32' : 'float32' };
      }
      this.tensorParams[this.tensorParams.length] = entry;
    }
  }

  /** The bridge of an op of a module that imports the library (tensors in or out, or its gradient); null for other ops. */
  static forOp(op: OpDescriptor, exposed: Record<string, unknown>): TensorBridge | null {
    let tensors = op.target.libraryGradient === true || op.target.tensorLibrary !== undefined;
    for (let i = 0; i < op.params.length; i++) if (op.params[i].tensor) tensors = true;
    if (!tensors) return null;
    const name = op.target.tensorLibrary ?? 'TensorFlow.js';
    let lib: unknown;
    try {
      lib = exposed[TENSOR_LIBRARY_BINDING];
    } catch (e) {
      fail(`reading the ${name} module threw ${describeThrown(e)}`);
    }
    if (lib === null || (typeof lib !== 'object' && typeof lib !== 'function')) fail(`the ${name} module is not available in the sandbox (got ${describeValue(lib)})`);
    const l = lib as Record<string, unknown>;
    if (typeof l.tensor !== 'function' || typeof l.tidy !== 'function') fail(`the ${name} module has no 'tensor' and 'tidy' functions: is it TensorFlow.js?`);
    if (op.target.libraryGradient && typeof l.grads !== 'function') fail(`the ${name} module has no 'grads' function to take the library's gradient with`);
    return new TensorBridge(l as unknown as TensorLibrary, op);
  }

  /** The value passed for forward parameter i: a fresh tensor for a tensor parameter. */
  private argument(i: number, value: unknown): unknown {
    const t = this.tensorParams[i];
    if (t === null || t === undefined || isTensor(value)) return value;
    if (typeof value === 'number') return this.lib.tensor(value, [], t.dtype);
    if (isView(value)) {
      // A copy: the engine perturbs the sample's own array in place between calls.
      const src = value as unknown as ArrayLike<number>;
      const data = t.dtype === 'int32' ? newOpI32(src.length) : newOpF32(src.length);
      for (let k = 0; k < src.length; k++) data[k] = src[k];
      return this.lib.tensor(data, t.shape !== null && t.shape.length > 0 ? t.shape : [src.length], t.dtype);
    }
    return this.lib.tensor(value); // a literal sample: the library reads its nested arrays
  }

  private argumentList(args: unknown[]): unknown[] {
    const list: unknown[] = [];
    for (let i = 0; i < args.length; i++) list[i] = this.argument(i, args[i]);
    return list;
  }

  /** Tensors in a result (alone, in an array or in an object of named parts) read back. */
  private readBack(value: unknown, forward: boolean): unknown {
    if (isTensor(value)) {
      if (forward) this.outputShape = copyList(value.shape);
      return readTensor(value);
    }
    if (forward) this.outputShape = null;
    if (isArray(value)) {
      let any = false;
      for (let i = 0; i < value.length; i++) if (isTensor(value[i])) any = true;
      if (!any) return value;
      const out: unknown[] = [];
      for (let i = 0; i < value.length; i++) out[i] = isTensor(value[i]) ? readTensor(value[i] as Tensor) : value[i];
      return out;
    }
    if (value !== null && typeof value === 'object' && !isView(value)) {
      const keys = objectKeys(value);
      let any = false;
      for (let i = 0; i < keys.length; i++) if (isTensor((value as Record<string, unknown>)[keys[i]])) any = true;
      if (!any) return value;
      const out: Record<string, unknown> = {};
      for (let i = 0; i < keys.length; i++) {
        const v = (value as Record<string, unknown>)[keys[i]];
        out[keys[i]] = isTensor(v) ? readTensor(v) : v;
      }
      return out;
    }
    return value;
  }

  /** Runs fn in the library's scope and returns what it produced; every tensor made meanwhile is disposed. */
  private scoped(fn: () => unknown): unknown {
    let result: unknown;
    // Nothing is returned from the scope (the result is plain arrays), so nothing is kept.
    reflectApply(this.lib.tidy, this.lib, [
      (): void => {
        result = fn();
      },
    ]);
    return result;
  }

  /** Calls the forward with tensors for its tensor parameters; tensor outputs come back as arrays. */
  callForward(fn: AnyFunction, thisArg: unknown, args: unknown[]): unknown {
    return this.scoped(() => this.readBack(reflectApply(fn, thisArg, this.argumentList(args)), true));
  }

  /** A `$dy` or `$y` value as a tensor of the forward output's shape, when the forward returned a tensor. */
  private outputValue(value: unknown): unknown {
    const shape = this.outputShape;
    if (shape === null) return value;
    if (typeof value === 'number') return this.lib.tensor(value, shape, 'float32');
    const src = value as ArrayLike<number>;
    const data = newOpF32(src.length);
    for (let k = 0; k < src.length; k++) data[k] = src[k];
    return this.lib.tensor(data, shape, 'float32');
  }

  /**
   * For a message about a backward's NaN: indexing a tensor gives undefined, so a backward that
   * treats `$dy` as an array while it is a tensor computes NaN.
   */
  upstreamNote(): string {
    return this.outputShape !== null ? ' ($dy and $y are tensors here, since the forward returned a tensor)' : '';
  }

  /** Calls a hand-written backward with tensors where the forward had them; reads tensors back. */
  callBackward(fn: AnyFunction, thisArg: unknown, list: unknown[], kinds: BackwardArg[]): unknown {
    return this.scoped(() => {
      const call: unknown[] = [];
      for (let i = 0; i < list.length; i++) {
        const a = kinds[i];
        if (a.kind === 'param') {
          const pos = positionOf(this.paramNames, a.name);
          call[i] = pos >= 0 ? this.argument(pos, list[i]) : list[i];
        } else call[i] = this.outputValue(list[i]);
      }
      return this.readBack(reflectApply(fn, thisArg, call), false);
    });
  }

  /**
   * A `@samples` factory may return tensors for tensor parameters: each is read back into a
   * Float32Array (the engine moves elements in place), its shape kept for the calls, the tensor
   * disposed, and the parameter differentiated unless it is `@fixed` or not float32.
   */
  adoptFactoryTensors(sample: Sample, fixed: string[]): void {
    const added: (ParamSlot | null)[] = [];
    let any = false;
    for (let i = 0; i < sample.args.length; i++) {
      added[i] = null;
      const v = sample.args[i];
      const entry = this.tensorParams[i];
      if (!isTensor(v) || !entry) continue;
      const name = sample.argNames[i];
      const shape = copyList(v.shape);
      const data = v.dataSync();
      const copy = newOpF32(data.length); // it becomes the op's argument
      for (let k = 0; k < data.length; k++) copy[k] = data[k];
      const float = v.dtype === 'float32';
      try {
        const dispose = (v as { dispose?: unknown }).dispose;
        if (typeof dispose === 'function') reflectApply(dispose, v, []);
      } catch {
        // a tensor that cannot be disposed stays; the check goes on
      }
      entry.shape = shape;
      entry.dtype = float ? 'float32' : 'int32';
      sample.args[i] = shape.length === 0 ? copy[0] : copy;
      if (!float || contains(fixed, name)) continue;
      const host = sample.args as unknown as Record<number, unknown>;
      added[i] =
        shape.length === 0
          ? new ParamSlot(name, name, 'f32', 'f32', [], 1, host, i, null, null, [])
          : new ParamSlot(name, name, 'f32', 'f32', shape, copy.length, host, i, copy, null, []);
      any = true;
    }
    if (!any) return;
    // Slots in declaration order, as the backward's gradients come.
    const slots: ParamSlot[] = [];
    for (let i = 0; i < sample.argNames.length; i++) {
      const adopted = added[i];
      if (adopted) slots[slots.length] = adopted;
      else for (let s = 0; s < sample.slots.length; s++) if (sample.slots[s].name === sample.argNames[i]) slots[slots.length] = sample.slots[s];
    }
    for (let s = 0; s < sample.slots.length; s++) if (!contains(sample.argNames, sample.slots[s].name)) slots[slots.length] = sample.slots[s];
    sample.slots = slots;
  }

  /**
   * The library's gradient of the forward at args with respect to the differentiated parameters
   * (names in slot order), for upstream gradient dy (flat, output-shaped): one array per
   * parameter, or the array itself for one, as a hand-written backward would return them.
   */
  libraryGradient(forward: AnyFunction, args: unknown[], differentiated: string[], dy: ArrayLike<number>): unknown {
    const positions: number[] = [];
    for (let k = 0; k < differentiated.length; k++) {
      const pos = positionOf(this.paramNames, differentiated[k]);
      if (pos < 0 || !this.tensorParams[pos]) {
        fail(
          `@backward library-gradient differentiates tensor parameters only: '${differentiated[k]}' is not declared as a tensor (declare it as tf.Tensor, or sample it \`fixed\`)`,
        );
      }
      positions[k] = pos;
    }
    if (this.outputShape === null) fail('@backward library-gradient needs a forward that returns one tensor');
    const grads = this.lib.grads as NonNullable<TensorLibrary['grads']>;
    return this.scoped(() => {
      const inputs = this.argumentList(args);
      const xs: Tensor[] = [];
      for (let k = 0; k < positions.length; k++) xs[k] = inputs[positions[k]] as Tensor;
      const f = (...moved: unknown[]): unknown => {
        const call: unknown[] = [];
        for (let i = 0; i < inputs.length; i++) call[i] = inputs[i];
        for (let k = 0; k < positions.length; k++) call[positions[k]] = moved[k];
        return reflectApply(forward, undefined, call);
      };
      let result: unknown;
      try {
        result = reflectApply(grads, this.lib, [f])(xs, this.outputValue(dy) as Tensor);
      } catch (e) {
        if (e instanceof CheckStop) throw e;
        fail(`the library's gradient call (grads) failed: ${describeThrown(e)}`);
      }
      if (!isArray(result) || result.length !== positions.length)
        fail(`the library's gradient call returned ${describeValue(result)}, expected ${positions.length} gradient${positions.length === 1 ? '' : 's'}`);
      const out: unknown[] = [];
      for (let k = 0; k < positions.length; k++) {
        const g = (result as unknown[])[k];
        if (!isTensor(g)) fail(`the library's gradient of '${differentiated[k]}' is ${describeValue(g)}, not a tensor`);
        const expected = this.tensorParams[positions[k]]?.shape;
        if (expected && expected.length > 0 && formatIndex(g.shape) !== formatIndex(expected)) {
          fail(`the library's gradient of '${differentiated[k]}' has shape ${formatIndex(g.shape)}, the parameter ${formatIndex(expected)}`);
        }
        const values = g.dataSync();
        const copy = new F32(values.length);
        for (let i = 0; i < values.length; i++) copy[i] = values[i];
        out[k] = copy;
      }
      return positions.length === 1 ? out[0] : out;
    });
  }
}
