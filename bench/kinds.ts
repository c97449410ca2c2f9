// Benchmark: cost of the derivative kinds in the engine (in process, no sandbox): forward and
// derivative calls and wall time of a @jacobian, @tangent and @hessian check as the sizes grow.
// Prints figures; asserts nothing about time.
// Run: npx esbuild bench/kinds.ts --bundle --platform=node --packages=external --outfile=/tmp/bench-kinds.js && node /tmp/bench-kinds.js
import { runCheck } from '../server/src/engine/check';
import { DEFAULT_SETTINGS } from '../server/src/engine/settings';
import type { BackwardArg, OpDescriptor, OpKind } from '../server/src/model/types';

type Fn = (...args: any[]) => any;

function op(kind: OpKind, n: number, args: BackwardArg[], gradient?: boolean): OpDescriptor {
  const descriptor: OpDescriptor = {
    kind,
    file: '/bench/ops.ts',
    line: 1,
    column: 1,
    endLine: 1,
    endColumn: 2,
    forward: `f @${kind}`,
    backward: 'd',
    target: { kind: 'function', forwardName: 'f', backwardName: 'd', backwardIsMethod: false },
    params: [{ name: 'x', isField: false, sample: { kind: 'random', dtype: 'f64', shape: [n], range: [-1, 1], avoid: [], fixed: false } }],
    backwardArgs: args,
    fixed: [],
    tags: [],
    problems: [],
  };
  if (gradient) descriptor.gradient = { name: 'g', backwardName: 'g', backwardIsMethod: false, args: [{ kind: 'param', name: 'x' }] };
  return descriptor;
}

function time(exposed: Record<string, Fn>, descriptor: OpDescriptor): string {
  const t0 = performance.now();
  const o = runCheck(exposed, { op: descriptor, settings: { ...DEFAULT_SETTINGS, stepScans: 'none' } }, () => performance.now());
  const ms = performance.now() - t0;
  return `${o.verdict.padEnd(9)} ${String(o.calls.forward).padStart(7)} ${String(o.calls.backward).padStart(5)} ${ms.toFixed(1).padStart(9)} ms`;
}

const X: BackwardArg[] = [{ kind: 'param', name: 'x' }];
console.log('check                                   verdict   forward  deriv      time');
// y = tanh(A x) with a dense n×n A: the Jacobian is diag(1 − y²)·A.
for (const n of [10, 50, 200]) {
  const A = Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => Math.sin(i * 7 + j * 3)));
  const f = (x: Float64Array): Float64Array => Float64Array.from(A.map((row) => Math.tanh(row.reduce((s, a, j) => s + a * x[j]!, 0) / n)));
  const jac = (x: Float64Array): Float64Array => {
    const y = f(x);
    const out = new Float64Array(n * n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) out[i * n + j] = ((1 - y[i]! ** 2) * A[i]![j]!) / n;
    return out;
  };
  const tan = (x: Float64Array, dx: Float64Array): Float64Array => {
    const J = jac(x);
    return Float64Array.from({ length: n }, (_, i) => {
      let s = 0;
      for (let j = 0; j < n; j++) s += J[i * n + j]! * dx[j]!;
      return s;
    });
  };
  console.log(`@jacobian tanh(Ax), ${n}×${n}`.padEnd(40), time({ f, d: jac }, op('jacobian', n, X)));
  console.log(`@tangent  tanh(Ax), n = ${n}`.padEnd(40), time({ f, d: tan }, op('tangent', n, [...X, { kind: 'tangent', name: 'x' }])));
}
// f(x) = Σ cosh(x_i) + (Σ x_i)²/2: H = diag(cosh x) + 1·1ᵀ.
for (const n of [5, 20, 50]) {
  const f = (x: Float64Array): number => x.reduce((s, v) => s + Math.cosh(v), 0) + x.reduce((s, v) => s + v, 0) ** 2 / 2;
  const g = (x: Float64Array): Float64Array => {
    const sum = x.reduce((s, v) => s + v, 0);
    return x.map((v) => Math.sinh(v) + sum);
  };
  const H = (x: Float64Array): Float64Array => {
    const out = new Float64Array(n * n).fill(1);
    for (let i = 0; i < n; i++) out[i * n + i] = 1 + Math.cosh(x[i]!);
    return out;
  };
  console.log(`@hessian second differences, n = ${n}`.padEnd(40), time({ f, d: H }, op('hessian', n, X)));
  console.log(`@hessian via passing @backward, n = ${n}`.padEnd(40), time({ f, d: H, g }, op('hessian', n, X, true)));
}
