// Small numeric helpers shared by the corpus ops. The ops import them so every check also
// exercises bundling of a relative import.

/** The logistic function 1 / (1 + e^-z), split at zero so exp never overflows. */
export function logistic(z: number): number {
  if (z >= 0) return 1 / (1 + Math.exp(-z));
  const e = Math.exp(z);
  return e / (1 + e);
}

/** Inner product of two equally long sequences. */
export function dot(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i] * b[i];
  return s;
}

/** Sum of a sequence. */
export function sum(a: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i];
  return s;
}

/** Numerically stable softmax of a sequence, as a new Float64Array. */
export function softmaxOf(x: ArrayLike<number>): Float64Array {
  let m = -Infinity;
  for (let i = 0; i < x.length; i++) m = Math.max(m, x[i]);
  const p = new Float64Array(x.length);
  let z = 0;
  for (let i = 0; i < x.length; i++) {
    p[i] = Math.exp(x[i] - m);
    z += p[i];
  }
  for (let i = 0; i < x.length; i++) p[i] /= z;
  return p;
}
