// Dispatches the derivative kinds other than @backward to their checks (one module per kind).

import { runHessianCheck, type BackwardRunner } from './hessianCheck';
import { runJacobianCheck } from './jacobianCheck';
import type { CheckSettings } from './settings';
import { runTangentCheck } from './tangentCheck';
import type { CheckOutcome, OpDescriptor } from '../model/types';

export function runDerivativeKind(
  exposed: Record<string, unknown>,
  op: OpDescriptor,
  settings: CheckSettings,
  seed: number,
  deadline: number,
  clock: () => number,
  runBackward: BackwardRunner,
): CheckOutcome {
  if (op.kind === 'jacobian') return runJacobianCheck(exposed, op, settings, seed, deadline, clock);
  if (op.kind === 'tangent') return runTangentCheck(exposed, op, settings, seed, deadline, clock);
  return runHessianCheck(exposed, op, settings, seed, deadline, clock, runBackward);
}
