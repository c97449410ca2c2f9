// Builds OpDescriptors by hand for engine tests (what discovery would produce from the tags), and
// runs them through runCheck in-process with plain functions.

import { runCheck } from '../../server/src/engine/check';
import { DEFAULT_SETTINGS, type CheckSettings } from '../../server/src/engine/settings';
import type { BackwardArg, CheckOutcome, OpDescriptor, ParamDescriptor, SampleDtype, SampleSpec } from '../../server/src/model/types';

type Fn = (...args: any[]) => any;

/** `@sample NAME DTYPE[shape] in [lo, hi] avoid ... fixed` as a spec. */
export function spec(dtype: SampleDtype, shape: number[] = [], range: [number, number] = [-1, 1], opts: { avoid?: number[]; fixed?: boolean } = {}): SampleSpec {
  return { kind: 'random', dtype, shape, range, avoid: opts.avoid ?? [], fixed: opts.fixed ?? false };
}

/** `@sample NAME = JSON`. */
export function literal(value: unknown): SampleSpec {
  return { kind: 'literal', value };
}

export interface FunctionOp {
  forward: Fn;
  backward: Fn;
  /** Parameters in declaration order with their specs (undefined with a samples factory). */
  params: [string, SampleSpec | undefined][];
  /** Explicit backward argument list: names, '$y', '$dy'. Default: every parameter then $dy. */
  backwardArgs?: string[];
  samples?: (random: () => number) => unknown[];
  fixed?: string[];
  tolerance?: number;
  seed?: number;
}

function toBackwardArgs(list: string[]): BackwardArg[] {
  return list.map((a) => (a === '$dy' ? { kind: 'upstream' } : a === '$y' ? { kind: 'output' } : { kind: 'param', name: a }));
}

function baseOp(name: string, params: ParamDescriptor[], backwardArgs: BackwardArg[], extra: Partial<OpDescriptor>): OpDescriptor {
  return {
    file: '/virtual/ops.ts',
    line: 1,
    column: 1,
    endLine: 1,
    endColumn: 10,
    forward: name,
    backward: `${name}Backward`,
    target: { kind: 'function', forwardName: name, backwardName: `${name}Backward`, backwardIsMethod: false },
    params,
    backwardArgs,
    fixed: [],
    tags: [],
    problems: [],
    ...extra,
  };
}

/** A function op: exposed bindings plus its descriptor. */
export function functionOp(def: FunctionOp): { exposed: Record<string, unknown>; op: OpDescriptor } {
  const params: ParamDescriptor[] = def.params.map(([name, s]) => (s ? { name, isField: false, sample: s } : { name, isField: false }));
  const args = def.backwardArgs ?? [...def.params.map(([n]) => n), '$dy'];
  const exposed: Record<string, unknown> = { op: def.forward, opBackward: def.backward };
  const extra: Partial<OpDescriptor> = { fixed: def.fixed ?? [] };
  if (def.tolerance !== undefined) extra.tolerance = def.tolerance;
  if (def.seed !== undefined) extra.seed = def.seed;
  const op = baseOp('op', params, toBackwardArgs(args), extra);
  if (def.samples) {
    exposed.opSamples = def.samples;
    op.target.samplesFactory = 'opSamples';
  }
  return { exposed, op };
}

export interface MethodOp {
  cls: new () => object;
  forwardName: string;
  backwardName: string;
  /** Forward parameters then `this.FIELD` entries. */
  params: [string, SampleSpec][];
  backwardArgs?: string[];
  construct?: () => object;
}

export function methodOp(def: MethodOp): { exposed: Record<string, unknown>; op: OpDescriptor } {
  const params: ParamDescriptor[] = def.params.map(([name, s]) => ({ name, isField: name.startsWith('this.'), sample: s }));
  const exposed: Record<string, unknown> = { Layer: def.cls };
  const op = baseOp(`Layer.${def.forwardName}`, params, toBackwardArgs(def.backwardArgs ?? ['$dy']), {});
  op.backward = def.backwardName;
  op.target = { kind: 'method', className: 'Layer', forwardName: def.forwardName, backwardName: def.backwardName, backwardIsMethod: true };
  if (def.construct) {
    exposed.makeLayer = def.construct;
    op.target.constructFactory = 'makeLayer';
  }
  return { exposed, op };
}

export const clock = (): number => performance.now();

/** Runs a built op with default settings (overridable). */
export function check(built: { exposed: Record<string, unknown>; op: OpDescriptor }, settings: Partial<CheckSettings> = {}): CheckOutcome {
  return runCheck(built.exposed, { op: built.op, settings: { ...DEFAULT_SETTINGS, ...settings } }, clock);
}

/** One-line summary of an outcome for assertion messages. */
export function show(o: CheckOutcome): string {
  return JSON.stringify({
    verdict: o.verdict,
    message: o.message,
    hints: o.hints,
    calls: o.calls,
    params: o.params.map((p) => ({ name: p.name, verdict: p.verdict, method: p.method, rel: p.maxRelError, worst: p.worst, hints: p.hints, checked: p.checkedElements })),
  });
}
