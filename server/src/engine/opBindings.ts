// Finds an op's functions in its module's exposed bindings (a function, a method of a class, or a
// function of a top-level object literal; @construct and @samples factories), failing with a
// message that names the missing or wrong binding.

import { describeThrown, describeValue } from './builtins';
import { fail } from './failure';
import type { OpDescriptor } from '../model/types';

export type AnyFunction = (...args: unknown[]) => unknown;

/** The functions (and `this` objects) an OpHarness calls. */
export interface OpBindings {
  forwardFn: AnyFunction;
  backwardFn: AnyFunction;
  /** The class of a method op, or null. */
  classCtor: AnyFunction | null;
  /** The object literal holding the op's functions (`this` for their calls), or null. */
  holder: Record<string, unknown> | null;
  constructFn: AnyFunction | null;
  samplesFn: AnyFunction | null;
}

function lookup(exposed: Record<string, unknown>, name: string): unknown {
  try {
    return exposed[name];
  } catch (e) {
    return fail(`reading '${name}' from the module threw ${describeThrown(e)}`);
  }
}

/** Looks up every function the op names; fails naming the first one that is missing. */
export function resolveBindings(op: OpDescriptor, exposed: Record<string, unknown>): OpBindings {
  const t = op.target;
  let forwardFn: AnyFunction;
  let backwardFn: AnyFunction;
  let classCtor: AnyFunction | null = null;
  let holder: Record<string, unknown> | null = null;
  if (t.kind === 'method') {
    const className = t.className ?? '';
    const cls = lookup(exposed, className);
    if (typeof cls !== 'function') fail(`class '${className}' is not available in the module (got ${describeValue(cls)})`);
    classCtor = cls as AnyFunction;
    const proto = (cls as { prototype?: Record<string, unknown> }).prototype;
    const fwd = proto ? proto[t.forwardName] : undefined;
    if (typeof fwd !== 'function') fail(`forward '${op.forward}' is not a method of class '${className}' (got ${describeValue(fwd)})`);
    forwardFn = fwd as AnyFunction;
    const bwd = t.backwardIsMethod ? (proto ? proto[t.backwardName] : undefined) : lookup(exposed, t.backwardName);
    if (typeof bwd !== 'function') {
      fail(`${op.kind ?? 'backward'} '${op.backward}' is not ${t.backwardIsMethod ? `a method of class '${className}'` : 'a function of the module'} (got ${describeValue(bwd)})`);
    }
    backwardFn = bwd as AnyFunction;
  } else if (t.objectName !== undefined) {
    // A function of a top-level object literal: called on the object, as `ops.f(x)` would be.
    const found = lookup(exposed, t.objectName);
    if (found === null || typeof found !== 'object') fail(`'${t.objectName}' is not an object in the module (got ${describeValue(found)})`);
    holder = found as Record<string, unknown>;
    const fwd = holder[t.forwardName];
    if (typeof fwd !== 'function') fail(`forward '${op.forward}' is not a function (got ${describeValue(fwd)})`);
    forwardFn = fwd as AnyFunction;
    const bwd = t.backwardIsMethod ? holder[t.backwardName] : lookup(exposed, t.backwardName);
    if (typeof bwd !== 'function') fail(`${op.kind ?? 'backward'} '${op.backward}' is not a function (got ${describeValue(bwd)})`);
    backwardFn = bwd as AnyFunction;
  } else {
    const fwd = lookup(exposed, t.forwardName);
    if (typeof fwd !== 'function') fail(`forward '${op.forward}' is not a function (got ${describeValue(fwd)})`);
    forwardFn = fwd as AnyFunction;
    // The library's gradient of the forward stands in for a backward function.
    const bwd = t.libraryGradient ? forwardFn : lookup(exposed, t.backwardName);
    if (typeof bwd !== 'function') fail(`${op.kind ?? 'backward'} '${op.backward}' is not a function (got ${describeValue(bwd)})`);
    backwardFn = bwd as AnyFunction;
  }
  let constructFn: AnyFunction | null = null;
  if (t.constructFactory !== undefined) {
    const f = lookup(exposed, t.constructFactory);
    if (typeof f !== 'function') fail(`@construct ${t.constructFactory} is not a function (got ${describeValue(f)})`);
    constructFn = f as AnyFunction;
  }
  let samplesFn: AnyFunction | null = null;
  if (t.samplesFactory !== undefined) {
    const f = lookup(exposed, t.samplesFactory);
    if (typeof f !== 'function') fail(`@samples ${t.samplesFactory} is not a function (got ${describeValue(f)})`);
    samplesFn = f as AnyFunction;
  }
  return { forwardFn, backwardFn, classCtor, holder, constructFn, samplesFn };
}
