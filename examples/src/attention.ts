// Attention over hours for the Brackenfold co-op forecaster (fictional): tomorrow's hour looks
// back at today's 24 hours and takes a softmax-weighted blend of their clear-sky ratios.

/**
 * Blend of the 24 hourly values with weights softmax(score / temperature).
 * @backward hourAttentionBackward
 * @sample score f64[24] in [-2, 2]
 * @sample value f64[24] in [0, 1]
 * @sample opts = {"temperature": 0.5}
 */
export function hourAttention(score: Float64Array, value: Float64Array, opts: { temperature: number }): number {
  const w = hourWeights(score, opts.temperature);
  let s = 0;
  for (let h = 0; h < w.length; h++) s += w[h] * value[h];
  return s;
}

export function hourAttentionBackward(
  score: Float64Array,
  value: Float64Array,
  opts: { temperature: number },
  dy: number,
): { score: Float64Array; value: Float64Array } {
  const w = hourWeights(score, opts.temperature);
  let blended = 0;
  for (let h = 0; h < w.length; h++) blended += w[h] * value[h];
  // DEMO BUG: the chain rule through score / temperature is missing its factor 1 / temperature.
  const dScore = w.map((wh, h) => dy * wh * (value[h] - blended));
  return { score: dScore, value: w.map((wh) => dy * wh) };
}

/** Softmax of score / temperature, shifted by the maximum so exp never overflows. */
export function hourWeights(score: Float64Array, temperature: number): Float64Array {
  let m = -Infinity;
  for (const s of score) m = Math.max(m, s / temperature);
  const e = score.map((s) => Math.exp(s / temperature - m));
  let z = 0;
  for (const v of e) z += v;
  return e.map((v) => v / z);
}
