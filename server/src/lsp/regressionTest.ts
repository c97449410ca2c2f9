// "Copy failing case as a regression test": turns an op's mismatch into a ready mocha `it(...)`
// that rebuilds the recorded sample, calls the backward with an all-ones upstream gradient and
// compares the worst element with a central difference, so the bug stays caught after it is fixed.

import { DEFAULT_SETTINGS } from '../engine/settings';
import { DEFAULT_EXPORT_BINDING, type BackwardArg, type OpDescriptor, type OpResult, type ParamResult } from '../model/types';
import { formatIndex as indexText, worstParam } from '../present/format';
import { regressionTestForKind } from './regressionTestKinds';

/**
 * Relative step of the snippet's central difference: the cube root of the dtype's machine
 * epsilon, h = ε^(1/3)·max(1,|x|) (Nocedal & Wright, Numerical Optimization 2nd ed., §8.1).
 * Machine epsilon ε = 2^-52 for binary64 and 2^-23 for binary32 (IEEE 754-2019).
 */
const STEP_EXPONENT_F64 = -52;
const STEP_EXPONENT_F32 = -23;

export type SnippetOutcome = { snippet: string } | { reason: string };

/**
 * The relative tolerance the check judged a parameter with: the engine's own (ParamResult.tolerance).
 * A result without one (from an engine before the field) falls back to the op's @tolerance, else float64's setting.
 */
export function appliedTolerance(op: OpDescriptor, param: ParamResult): number {
  return param.tolerance ?? op.tolerance ?? DEFAULT_SETTINGS.toleranceF64;
}

/** The snippet of an op's mismatch, or why there is none. */
export function regressionTestFor(op: OpDescriptor, result: OpResult): SnippetOutcome {
  if (result.verdict !== 'mismatch') return { reason: `${op.forward} is not a mismatch (verdict ${result.verdict}); there is no failing case to copy` };
  if (op.kind !== undefined && op.kind !== 'backward') return regressionTestForKind(op, result);
  if (!result.inputs) return { reason: `the sample of ${op.forward} was too large to record, so it cannot be written into a test` };
  // TensorFlow.js ops: tensors are made from the recorded arrays at every call, outputs read back.
  const tensorLib = op.target.tensorLibrary;
  const tensorOp = tensorLib !== undefined && (op.target.libraryGradient === true || op.params.some((p) => p.tensor));
  // The parameter the verdict rests on (present/format.ts, the one rule of every surface).
  const param = worstParam(result);
  if (!param || param.verdict !== 'mismatch' || !param.worst) return { reason: `${op.forward}: no mismatching element was recorded` };

  const isMethod = op.target.kind === 'method';
  const plainParams = op.params.filter((p) => !p.isField).map((p) => p.name);
  const lines: string[] = [];
  const push = (depth: number, text: string): void => {
    lines.push('  '.repeat(depth) + text);
  };
  const differentiated = result.params.map((p) => p.name);
  const f32 = param.dtype === 'f32';

  push(0, `// Regression test for ${op.forward}: Gradient Probe found its backward wrong at seed ${result.seed}`);
  push(0, `// (${param.name} at ${indexText(param.worst.index)}: backward ${param.worst.analytic}, numeric ${param.worst.numeric}).`);
  const needs = tensorOp ? ` import * as tf from '${tensorLib}';` : '';
  push(0, `// Needs: import assert from 'node:assert/strict';${needs} and ${importList(op).join(', ')} imported from the op's module.`);
  push(0, `it('${quote(op.forward)}: backward agrees with a central difference at the recorded sample (seed ${result.seed})', () => {`);
  push(1, `const args: any[] = [${result.inputs.args.map(literal).join(', ')}];`);
  // A function of an object literal is called on the object (OpTarget.objectName).
  const callHolder = isMethod ? 'self.' : op.target.objectName !== undefined ? `${op.target.objectName}.` : '';
  const call = (list: string): string => `${callHolder}${op.target.forwardName}(...${list})`;
  if (tensorOp) {
    const shapes = op.params.filter((p) => !p.isField).map((p) => (!p.tensor ? 'null' : p.sample?.kind === 'random' ? JSON.stringify(p.sample.shape) : 'undefined'));
    push(1, `// Tensor parameters get tensors of these shapes (null: not a tensor; undefined: the library infers it).`);
    push(1, `const shapes: (number[] | null | undefined)[] = [${shapes.join(', ')}];`);
    push(1, `const toArgs = (): any[] => args.map((v, i) => (shapes[i] === null ? v : tf.tensor(v, shapes[i])));`);
    push(1, `const fromTensor = (v: any): any => (v && typeof v.dataSync === 'function' ? Float32Array.from(v.dataSync()) : Array.isArray(v) ? v.map(fromTensor) : v);`);
  }
  if (isMethod) {
    const make = op.target.constructFactory ? `${op.target.constructFactory}()` : `new ${op.target.className}()`;
    push(1, `const self: any = ${make};`);
    for (const [field, value] of Object.entries(result.inputs.fields)) push(1, `self.${field} = ${literal(value)};`);
  }
  if (tensorOp) {
    push(1, `const forward = (): any => tf.tidy(() => fromTensor(${call('toArgs()')}));`);
    push(1, `const outShape: number[] | null = tf.tidy(() => { const o: any = ${call('toArgs()')}; return o && typeof o.dataSync === 'function' ? o.shape : null; });`);
    push(1, `const asOutput = (v: any): any => (outShape ? tf.tensor(v, outShape) : v);`);
  } else {
    push(1, `const forward = (): any => ${call('args')};`);
  }
  push(1, `// Flattens a number, typed array, nested array or object of outputs into one list.`);
  push(
    1,
    `const flat = (v: any): number[] => typeof v === 'number' ? [v] : ArrayBuffer.isView(v) || Array.isArray(v) ? Array.from(v as ArrayLike<any>).flatMap(flat) : Object.keys(v).sort().flatMap((k) => flat(v[k]));`,
  );
  push(
    1,
    `const onesLike = (v: any): any => typeof v === 'number' ? 1 : ArrayBuffer.isView(v) ? (v as any).map(() => 1) : Array.isArray(v) ? v.map(onesLike) : Object.fromEntries(Object.keys(v).map((k) => [k, onesLike(v[k])]));`,
  );
  push(1, `const y = forward();`);
  push(1, `const dy = onesLike(y);`);
  // A gradient the backward leaves in a field (@gradientField) is read there; the rest come back from the call.
  const inField = op.gradientFields?.find((g) => g.param === param.name);
  const callee =
    isMethod && op.target.backwardIsMethod
      ? `self.${op.target.backwardName}`
      : op.target.objectName !== undefined && op.target.backwardIsMethod
        ? `${op.target.objectName}.${op.target.backwardName}`
        : op.target.backwardName;
  if (tensorOp && op.target.libraryGradient) {
    const diff = differentiated.map((n) => plainParams.indexOf(n));
    push(1, `// The library's own gradient of the forward (what \`@backward library-gradient\` checks), for upstream dy.`);
    push(1, `const diff = ${JSON.stringify(diff)};`);
    push(
      1,
      `const libraryGrads: any[] = tf.tidy(() => { const xs = toArgs(); const f = (...moved: any[]): any => { const a = toArgs(); diff.forEach((p, k) => { a[p] = moved[k]; }); return ${call('a')}; }; return fromTensor(tf.grads(f)(diff.map((p) => xs[p]), asOutput(dy))); });`,
    );
    push(1, `const grads: any = diff.length === 1 ? libraryGrads[0] : libraryGrads;`);
  } else if (tensorOp) {
    const backwardArgs = op.backwardArgs.map((a) =>
      a.kind === 'param' ? backwardArgText(a, plainParams).replace(/^args\[/, 't[') : `asOutput(${a.kind === 'output' ? 'y' : 'dy'})`,
    );
    push(1, `const grads: any = tf.tidy(() => { const t = toArgs(); return fromTensor(${callee}(${backwardArgs.join(', ')})); });`);
  } else {
    const backwardArgs = op.backwardArgs.map((a) => backwardArgText(a, plainParams));
    zeroGradientFields(op, push);
    push(1, `${inField ? '' : 'const grads: any = '}${callee}(${backwardArgs.join(', ')});`);
  }
  const returned = differentiated.filter((n) => !op.gradientFields?.some((g) => g.param === n));
  const pick = inField
    ? `self.${inField.field}`
    : returned.length === 1
      ? 'grads'
      : `(Array.isArray(grads) ? grads[${returned.indexOf(param.name)}] : grads[${JSON.stringify(param.name.replace(/^this\./, ''))}])`;
  push(1, `const analytic = flat(${pick})[${flatIndex(param)}];`);
  push(1, `// The worst element, reached through its multi-index ${indexText(param.worst.index)}.`);
  const holder = param.name.startsWith('this.') ? `self.${param.name.slice(5)}` : `args[${plainParams.indexOf(param.name)}]`;
  const access = elementAccess(holder, param);
  push(1, `const read = (): number => ${access.read};`);
  push(1, `const write = (v: number): void => { ${access.write}; };`);
  push(1, `const x0 = read();`);
  push(1, `// Step h = ε^(1/3)·max(1,|x|) (Nocedal & Wright, 2nd ed., §8.1); the stored values give the exact divisor.`);
  push(1, `const h = Math.cbrt(2 ** ${f32 ? STEP_EXPONENT_F32 : STEP_EXPONENT_F64}) * Math.max(1, Math.abs(x0));`);
  push(1, `write(x0 + h); const xp = read(); const up = flat(forward()).reduce((s, v) => s + v, 0);`);
  push(1, `write(x0 - h); const xm = read(); const down = flat(forward()).reduce((s, v) => s + v, 0);`);
  push(1, `write(x0);`);
  push(1, `const numeric = (up - down) / (xp - xm);`);
  push(1, `const tolerance = ${appliedTolerance(op, param)}; // relative, the one the check applied`);
  push(1, `assert.ok(Math.abs(analytic - numeric) <= tolerance * Math.max(Math.abs(analytic), Math.abs(numeric)),`);
  push(2, `\`${quoteTemplate(param.name)}${indexText(param.worst.index)}: backward \${analytic}, central difference \${numeric}\`);`);
  push(0, `});`);
  return { snippet: lines.join('\n') + '\n' };
}

/** The snippet's copy of the check's rule: every @gradientField field set to zero, in place, before the backward call. */
function zeroGradientFields(op: OpDescriptor, push: (depth: number, text: string) => void): void {
  if (!op.gradientFields?.length) return;
  push(1, `// As the check does (and a training loop between steps): the gradient fields start at zero.`);
  push(
    1,
    `const zero = (v: any): any => { if (ArrayBuffer.isView(v)) (v as any).fill(0); else if (Array.isArray(v)) v.forEach((e, i) => { if (typeof e === 'number') v[i] = 0; else zero(e); }); return typeof v === 'number' ? 0 : v; };`,
  );
  for (const g of op.gradientFields) push(1, `self.${g.field} = zero(self.${g.field});`);
}

function importList(op: OpDescriptor): string[] {
  if (op.target.kind === 'method') return [op.target.constructFactory ?? op.target.className ?? op.forward];
  if (op.target.libraryGradient) return [op.target.forwardName];
  if (op.target.objectName !== undefined) return op.target.backwardIsMethod ? [op.target.objectName] : [op.target.objectName, op.target.backwardName];
  // An anonymous default export: `import name from` the module, under the name the snippet uses.
  if (op.target.forwardName === DEFAULT_EXPORT_BINDING) return [`the default export (as ${DEFAULT_EXPORT_BINDING})`, op.target.backwardName];
  return [op.target.forwardName, op.target.backwardName];
}

function backwardArgText(arg: BackwardArg, plainParams: string[]): string {
  if (arg.kind === 'output') return 'y';
  if (arg.kind === 'upstream') return 'dy';
  if (arg.kind === 'tangent' || arg.kind === 'vector') return 'undefined';
  if (arg.name.startsWith('this.')) return `self.${arg.name.slice(5)}`;
  return `args[${plainParams.indexOf(arg.name)}]`;
}

/** Row-major flat index of the worst element (typed arrays are flat; nested arrays flatten the same way). */
function flatIndex(p: ParamResult): number {
  const index = p.worst?.index ?? [];
  let flat = 0;
  for (let d = 0; d < index.length; d++) flat = flat * (p.shape[d] ?? 1) + index[d]!;
  return flat;
}

function elementAccess(holder: string, p: ParamResult): { read: string; write: string } {
  const index = p.worst?.index ?? [];
  if (index.length === 0) return { read: holder, write: `${holder} = v` };
  // A typed array is flat whatever its shape; a plain number[] is nested one level per dimension.
  const typed = p.dtype === 'f64' || p.dtype === 'f32';
  const path = typed ? `[${flatIndex(p)}]` : index.map((i) => `[${i}]`).join('');
  return { read: `${holder}${path}`, write: `${holder}${path} = v` };
}

/** A recorded input as TypeScript source: typed arrays come as `{ dtype, data }`. */
export function literal(value: unknown): string {
  if (typeof value === 'number') return numberText(value);
  if (Array.isArray(value)) return `[${value.map(literal).join(', ')}]`;
  if (value && typeof value === 'object') {
    const v = value as Record<string, unknown>;
    if (typeof v.dtype === 'string' && Array.isArray(v.data)) {
      const ctor = typedArrayName(v.dtype);
      if (ctor) return `${ctor}.from([${(v.data as unknown[]).map(literal).join(', ')}])`;
    }
    return `{ ${Object.entries(v)
      .map(([k, x]) => `${JSON.stringify(k)}: ${literal(x)}`)
      .join(', ')} }`;
  }
  return JSON.stringify(value) ?? 'undefined';
}

function typedArrayName(dtype: string): string | undefined {
  const d = dtype.toLowerCase();
  if (d === 'f64' || d === 'float64' || d === 'float64array') return 'Float64Array';
  if (d === 'f32' || d === 'float32' || d === 'float32array') return 'Float32Array';
  if (d === 'i32' || d === 'int32' || d === 'int32array') return 'Int32Array';
  return undefined;
}

/** Shortest text that reads back as the same double (JavaScript's Number → String is exact). */
function numberText(n: number): string {
  return Object.is(n, -0) ? '-0' : String(n);
}

export function quote(text: string): string {
  return text.replace(/\\/g, '\\\\').replace(/'/g, "\\'");
}

function quoteTemplate(text: string): string {
  return text.replace(/[`$\\]/g, (c) => `\\${c}`);
}
