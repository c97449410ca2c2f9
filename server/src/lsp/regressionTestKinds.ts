// "Copy failing case as a regression test" for @jacobian, @tangent and @hessian ops: a mocha
// `it(...)` that rebuilds the recorded sample, calls the op's derivative function and compares
// it with differences of the forward — the Jacobian's worst column and a tangent by central
// differences (h = ε^(1/3)·max(1,|x|)), the Hessian's worst column by second differences
// (h = ε^(1/4)·max(1,|x|); Nocedal & Wright, Numerical Optimization 2nd ed., §8.1) — so the
// bug stays caught after it is fixed.

import type { BackwardArg, OpDescriptor, OpResult } from '../model/types';
import { worstParam } from '../present/format';
import { appliedTolerance, literal, quote, type SnippetOutcome } from './regressionTest';

/** Machine epsilon exponents of the dtypes (IEEE 754-2019: 2^-52 binary64, 2^-23 binary32). */
const EPS_EXPONENT_F64 = -52;
const EPS_EXPONENT_F32 = -23;

export function regressionTestForKind(op: OpDescriptor, result: OpResult): SnippetOutcome {
  const kind = op.kind ?? 'backward';
  if (!result.inputs) return { reason: `the sample of ${op.forward} was too large to record, so it cannot be written into a test` };
  // A Hessian-vector product ($v) is compared along a fixed direction, like a tangent.
  const hvp = op.backwardArgs.some((a) => a.kind === 'vector');
  // The parameter the verdict rests on (present/format.ts, the one rule of every surface).
  const worst = worstParam(result);
  const bad = worst?.verdict === 'mismatch' ? worst : undefined;
  if (!bad) return { reason: `${op.forward}: no mismatching parameter was recorded` };
  if (kind !== 'tangent' && !hvp && !bad.worst) return { reason: `${op.forward}: no mismatching entry was recorded` };

  const isMethod = op.target.kind === 'method';
  const plainParams = op.params.filter((p) => !p.isField).map((p) => p.name);
  const names = result.params.map((p) => p.name);
  const badIndex = names.indexOf(bad.name);
  const f32 = result.params.some((p) => p.dtype === 'f32');
  const holder = (name: string): string => (name.startsWith('this.') ? `self.${name.slice(5)}` : `args[${plainParams.indexOf(name)}]`);
  const lines: string[] = [];
  const push = (depth: number, text: string): void => {
    lines.push('  '.repeat(depth) + text);
  };
  const callee = isMethod && op.target.backwardIsMethod ? `self.${op.target.backwardName}` : op.target.backwardName;
  const imports = isMethod ? [op.target.constructFactory ?? op.target.className ?? op.forward] : [op.target.forwardName, op.target.backwardName];

  push(0, `// Regression test for ${op.forward}: Gradient Probe found its ${kind} wrong at seed ${result.seed}.`);
  push(0, `// ${oneLine(result.message)}`);
  push(0, `// Needs: import assert from 'node:assert/strict'; and ${imports.join(', ')} imported from the op's module.`);
  push(0, `it('${quote(op.forward)}: ${kind} agrees with differences of the forward at the recorded sample (seed ${result.seed})', () => {`);
  push(1, `const args: any[] = [${result.inputs.args.map(literal).join(', ')}];`);
  if (isMethod) {
    push(1, `const self: any = ${op.target.constructFactory ? `${op.target.constructFactory}()` : `new ${op.target.className}()`};`);
    for (const [field, value] of Object.entries(result.inputs.fields)) push(1, `self.${field} = ${literal(value)};`);
    push(1, `const forward = (): any => self.${op.target.forwardName}(...args);`);
  } else {
    push(1, `const forward = (): any => ${op.target.forwardName}(...args);`);
  }
  push(
    1,
    `const flat = (v: any): number[] => typeof v === 'number' ? [v] : ArrayBuffer.isView(v) || Array.isArray(v) ? Array.from(v as ArrayLike<any>).flatMap(flat) : Object.keys(v).flatMap((k) => flat(v[k]));`,
  );
  push(1, `// Writes values (in flat order) into a number, typed array or nested array; returns the new value.`);
  push(
    1,
    `const assign = (v: any, xs: number[], pos: { i: number }): any => { if (typeof v === 'number') return xs[pos.i++]; if (ArrayBuffer.isView(v)) { for (let k = 0; k < (v as any).length; k++) (v as any)[k] = xs[pos.i++]; return v; } for (let k = 0; k < v.length; k++) v[k] = assign(v[k], xs, pos); return v; };`,
  );
  push(
    1,
    `const like = (v: any, xs: number[]): any => assign(typeof v === 'number' ? 0 : ArrayBuffer.isView(v) ? new (v as any).constructor((v as any).length) : JSON.parse(JSON.stringify(v)), xs, { i: 0 });`,
  );
  push(1, `// The differentiated parameters (${names.join(', ')}) as one vector x.`);
  push(1, `const parts = [${names.map((n) => `{ get: (): any => ${holder(n)}, set: (v: any): void => { ${holder(n)} = v; } }`).join(', ')}];`);
  push(1, `const sizes = parts.map((p) => flat(p.get()).length);`);
  push(1, `const x0 = parts.flatMap((p) => flat(p.get()));`);
  push(1, `const writeX = (xs: number[]): void => { const pos = { i: 0 }; for (const p of parts) p.set(assign(p.get(), xs, pos)); };`);
  push(1, `const F = (xs: number[]): number[] => { writeX(xs); const out = flat(forward()); writeX(x0); return out; };`);
  push(1, `const offset = sizes.slice(0, ${badIndex}).reduce((s, n) => s + n, 0);`);
  push(1, `const eps = 2 ** ${f32 ? EPS_EXPONENT_F32 : EPS_EXPONENT_F64};`);
  push(1, `const tolerance = ${appliedTolerance(op, bad)}; // relative, the one the check applied`);
  push(1, `const close = (a: number, n: number, scale: number): boolean => Math.abs(a - n) <= tolerance * Math.max(Math.abs(a), Math.abs(n), Math.sqrt(eps) * scale);`);

  const argText = (a: BackwardArg): string => {
    if (a.kind === 'param') return holder(a.name);
    if (a.kind === 'output') return 'forward()';
    if (a.kind === 'tangent') return `like(${holder(a.name)}, tangentOf(${JSON.stringify(a.name)}))`;
    // $v: one part per differentiated parameter, shaped like it (a single parameter's part alone).
    if (a.kind === 'vector') return names.length === 1 ? `like(${holder(names[0]!)}, v)` : `[${names.map((n, q) => `like(${holder(n)}, partOf(${q}))`).join(', ')}]`;
    return 'undefined';
  };
  const pick = names.length === 1 ? 'result' : `(Array.isArray(result) ? result[${badIndex}] : result[${JSON.stringify(bad.name.replace(/^this\./, ''))}])`;

  if (hvp) {
    push(1, `// A fixed direction v over every differentiated parameter (${names.join(', ')}).`);
    push(1, `const v = x0.map((_, g) => 1 - 0.37 * (g % 5));`);
    push(1, `const partOf = (q: number): number[] => { const from = sizes.slice(0, q).reduce((s, n) => s + n, 0); return v.slice(from, from + sizes[q]!); };`);
    push(1, `const Hv = flat(${callee}(${op.backwardArgs.map(argText).join(', ')}));`);
    push(1, `// (H·v)_k by second differences along element k and v (step ε^(1/4), Nocedal & Wright, 2nd ed., §8.1).`);
    push(1, `const h = Math.pow(eps, 0.25) * Math.max(1, ...x0.map(Math.abs));`);
    push(1, `const at = (a: number, b: number, k: number): number => F(x0.map((x, j) => x + (j === k ? a * h : 0) + b * h * v[j]!))[0]!;`);
    push(1, `const numeric = x0.map((_, k) => (at(1, 1, k) - at(1, -1, k) - at(-1, 1, k) + at(-1, -1, k)) / (4 * h * h));`);
    push(1, `const scale = Math.max(...numeric.map(Math.abs), ...Hv.map(Math.abs));`);
    push(1, `numeric.forEach((n, k) => assert.ok(close(Hv[k]!, n, scale), \`(H·v)[\${k}]: hessian \${Hv[k]}, second difference \${n}\`));`);
  } else if (kind === 'tangent') {
    push(1, `// A fixed tangent of ${bad.name} (the other tangents zero).`);
    push(1, `const t = x0.map((_, g) => (g >= offset && g < offset + sizes[${badIndex}]! ? 1 - 0.37 * ((g - offset) % 5) : 0));`);
    push(
      1,
      `const tangentOf = (name: string): number[] => { const q = ${JSON.stringify(names)}.indexOf(name); const from = sizes.slice(0, q).reduce((s, n) => s + n, 0); return t.slice(from, from + sizes[q]!); };`,
    );
    push(1, `const analytic = flat(${callee}(${op.backwardArgs.map(argText).join(', ')}));`);
    push(1, `const h = Math.cbrt(eps) * Math.max(1, ...x0.map(Math.abs));`);
    push(1, `const up = F(x0.map((x, g) => x + h * t[g]!));`);
    push(1, `const down = F(x0.map((x, g) => x - h * t[g]!));`);
    push(1, `const numeric = up.map((u, k) => (u - down[k]!) / (2 * h));`);
    push(1, `const scale = Math.max(...numeric.map(Math.abs), ...analytic.map(Math.abs));`);
    push(1, `numeric.forEach((n, k) => assert.ok(close(analytic[k]!, n, scale), \`output \${k}: tangent \${analytic[k]}, central difference \${n}\`));`);
  } else {
    push(1, `const result: any = ${callee}(${op.backwardArgs.map(argText).join(', ')});`);
    push(1, `const i = ${flatIndex(bad.worst!.index, bad.shape)}; // ${bad.name} element of the worst column`);
    push(1, `const g = offset + i;`);
    if (kind === 'jacobian') {
      push(1, `const J = flat(${pick}); // row-major, one row per output`);
      push(1, `const n = sizes[${badIndex}]!;`);
      push(1, `// Central difference of every output along element g (Nocedal & Wright, 2nd ed., §8.1).`);
      push(1, `const h = Math.cbrt(eps) * Math.max(1, Math.abs(x0[g]!));`);
      push(1, `const up = F(x0.map((x, k) => (k === g ? x + h : x)));`);
      push(1, `const down = F(x0.map((x, k) => (k === g ? x - h : x)));`);
      push(1, `const column = up.map((u, k) => (u - down[k]!) / (2 * h));`);
      push(1, `const scale = Math.max(...column.map(Math.abs));`);
      push(1, `column.forEach((c, k) => assert.ok(close(J[k * n + i]!, c, scale), \`J[\${k}, \${i}]: jacobian \${J[k * n + i]}, central difference \${c}\`));`);
    } else {
      push(1, `const H = flat(result); // n×n over every differentiated parameter`);
      push(1, `const n = x0.length;`);
      push(1, `// Second differences along elements g and k (step ε^(1/4), Nocedal & Wright, 2nd ed., §8.1).`);
      push(1, `const h = Math.pow(eps, 0.25) * Math.max(1, ...x0.map(Math.abs));`);
      push(1, `const at = (a: number, b: number, k: number): number => F(x0.map((x, j) => x + (j === g ? a * h : 0) + (j === k ? b * h : 0)))[0]!;`);
      push(1, `const column = x0.map((_, k) => (at(1, 1, k) - at(1, -1, k) - at(-1, 1, k) + at(-1, -1, k)) / (4 * h * h));`);
      push(1, `const scale = Math.max(...column.map(Math.abs));`);
      push(1, `column.forEach((c, k) => assert.ok(close(H[k * n + g]!, c, scale), \`H[\${k}, \${g}]: hessian \${H[k * n + g]}, second difference \${c}\`));`);
    }
  }
  push(0, `});`);
  return { snippet: lines.join('\n') + '\n' };
}

function flatIndex(index: number[], shape: number[]): number {
  let flat = 0;
  for (let d = 0; d < index.length; d++) flat = flat * (shape[d] ?? 1) + index[d]!;
  return flat;
}

function oneLine(text: string): string {
  const t = text.replace(/\s+/g, ' ').trim();
  return t.length > 200 ? `${t.slice(0, 199)}…` : t;
}
