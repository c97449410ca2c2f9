// Normalisations and reductions of the Quillmere Glasshouse controller (fictional): softmax
// over ventilation modes, layer norm of sensor features, log-sum-exp, weighted means and a
// cross-entropy. Part of the labelled accuracy corpus (labels.json); some backwards are wrong
// on purpose.

import { dot, softmaxOf, sum } from './util';

/**
 * Preference over twelve ventilation modes.
 * @backward modePreferenceBackward
 * @sample score f64[12] in [-3, 3]
 */
export function modePreference(score: Float64Array): Float64Array {
  return softmaxOf(score);
}

export function modePreferenceBackward(score: Float64Array, dy: Float64Array): Float64Array {
  const p = softmaxOf(score);
  const s = dot(dy, p);
  return p.map((pi, i) => pi * (dy[i] - s));
}

/**
 * Preference over twelve shading modes (same softmax).
 * @backward shadePreferenceBackward
 * @sample score f64[12] in [-3, 3]
 */
export function shadePreference(score: Float64Array): Float64Array {
  return softmaxOf(score);
}

export function shadePreferenceBackward(score: Float64Array, dy: Float64Array): Float64Array {
  const p = softmaxOf(score);
  // BUG (labelled): subtracts Σ dy instead of Σ dy·p.
  const s = sum(dy);
  return p.map((pi, i) => pi * (dy[i] - s));
}

/** Layer norm core shared by the two layer-norm ops. */
function normalise(x: Float64Array, eps: number): { xhat: Float64Array; sigma: number } {
  const n = x.length;
  const mu = sum(x) / n;
  let v = 0;
  for (let i = 0; i < n; i++) v += (x[i] - mu) ** 2;
  const sigma = Math.sqrt(v / n + eps);
  return { xhat: x.map((xi) => (xi - mu) / sigma), sigma };
}

/**
 * Layer norm of the sixteen sensor features, with learnable gain and shift.
 * @backward sensorNormBackward
 * @sample x f64[16] in [-3, 3]
 * @sample gamma f64[16] in [0.5, 1.5]
 * @sample beta f64[16]
 * @sample opts = {"eps": 1e-5}
 */
export function sensorNorm(x: Float64Array, gamma: Float64Array, beta: Float64Array, opts: { eps: number }): Float64Array {
  const { xhat } = normalise(x, opts.eps);
  return xhat.map((h, i) => gamma[i] * h + beta[i]);
}

export function sensorNormBackward(
  x: Float64Array,
  gamma: Float64Array,
  _beta: Float64Array,
  opts: { eps: number },
  dy: Float64Array,
): { x: Float64Array; gamma: Float64Array; beta: Float64Array } {
  const n = x.length;
  const { xhat, sigma } = normalise(x, opts.eps);
  const g = dy.map((d, i) => d * gamma[i]);
  const meanG = sum(g) / n;
  const meanGX = dot(g, xhat) / n;
  return {
    x: g.map((gi, i) => (gi - meanG - xhat[i] * meanGX) / sigma),
    gamma: dy.map((d, i) => d * xhat[i]),
    beta: Float64Array.from(dy),
  };
}

/**
 * Layer norm of the sixteen canopy features (same maths, separate implementation).
 * @backward canopyNormBackward
 * @sample x f64[16] in [-3, 3]
 * @sample gamma f64[16] in [0.5, 1.5]
 * @sample beta f64[16]
 * @sample opts = {"eps": 1e-5}
 */
export function canopyNorm(x: Float64Array, gamma: Float64Array, beta: Float64Array, opts: { eps: number }): Float64Array {
  return sensorNorm(x, gamma, beta, opts);
}

export function canopyNormBackward(
  x: Float64Array,
  gamma: Float64Array,
  _beta: Float64Array,
  opts: { eps: number },
  dy: Float64Array,
): { x: Float64Array; gamma: Float64Array; beta: Float64Array } {
  const n = x.length;
  const { xhat, sigma } = normalise(x, opts.eps);
  const g = dy.map((d, i) => d * gamma[i]);
  const meanGX = dot(g, xhat) / n;
  return {
    // BUG (labelled): the mean of the upstream term (−mean(g)) is missing.
    x: g.map((gi, i) => (gi - xhat[i] * meanGX) / sigma),
    gamma: dy.map((d, i) => d * xhat[i]),
    beta: Float64Array.from(dy),
  };
}

/**
 * Soft maximum of twelve zone temperatures (log-sum-exp), a number.
 * @backward softPeakGrad(x)
 * @sample x f64[12] in [-10, 10]
 */
export function softPeak(x: Float64Array): number {
  let m = -Infinity;
  for (const v of x) m = Math.max(m, v);
  let s = 0;
  for (const v of x) s += Math.exp(v - m);
  return m + Math.log(s);
}

export function softPeakGrad(x: Float64Array): Float64Array {
  return softmaxOf(x);
}

/**
 * Soft maximum of twelve humidity readings (log-sum-exp), a number.
 * @backward softHumidityPeakGrad(x)
 * @sample x f64[12] in [-10, 10]
 */
export function softHumidityPeak(x: Float64Array): number {
  return softPeak(x);
}

export function softHumidityPeakGrad(x: Float64Array): Float64Array {
  let m = -Infinity;
  for (const v of x) m = Math.max(m, v);
  let s = 0;
  for (const v of x) s += Math.exp(v - m);
  // BUG (labelled): reuses log Σ exp(x − m) as if it were the log-sum-exp (the max is not added back).
  const lse = Math.log(s);
  return x.map((v) => Math.exp(v - lse));
}

/** Floor area of the ten benches (m²), the weights of the mean below. */
const BENCH_AREA = [4, 4, 6, 6, 6, 8, 3, 3, 5, 5];

/**
 * Area-weighted mean substrate moisture over ten benches; tight tolerance and its own seed.
 * @backward benchMoistureGrad(moisture)
 * @sample moisture f64[10] in [0.1, 0.6]
 * @tolerance 1e-8
 * @seed 2024
 */
export function benchMoisture(moisture: Float64Array): number {
  return dot(moisture, BENCH_AREA) / sum(BENCH_AREA);
}

export function benchMoistureGrad(moisture: Float64Array): Float64Array {
  const total = sum(BENCH_AREA);
  return moisture.map((_, i) => BENCH_AREA[i] / total);
}

/**
 * Cross-entropy of the climate-state classifier against a fixed soft target.
 * @backward climateStateLossGrad(logits, target)
 * @sample logits f64[10] in [-3, 3]
 * @sample target f64[10] in [0, 1] fixed
 */
export function climateStateLoss(logits: Float64Array, target: Float64Array): number {
  const p = softmaxOf(logits);
  let s = 0;
  for (let i = 0; i < p.length; i++) s -= target[i] * Math.log(p[i]);
  return s;
}

export function climateStateLossGrad(logits: Float64Array, target: Float64Array): Float64Array {
  const p = softmaxOf(logits);
  const t = sum(target);
  return p.map((pi, i) => pi * t - target[i]);
}

/**
 * Cross-entropy of the irrigation-state classifier against a fixed soft target.
 * @backward irrigationStateLossGrad(logits, target)
 * @sample logits f64[10] in [-3, 3]
 * @sample target f64[10] in [0, 1] fixed
 */
export function irrigationStateLoss(logits: Float64Array, target: Float64Array): number {
  return climateStateLoss(logits, target);
}

export function irrigationStateLossGrad(logits: Float64Array, target: Float64Array): Float64Array {
  const p = softmaxOf(logits);
  const t = sum(target);
  // BUG (labelled): sign flipped (target − p·Σt instead of p·Σt − target).
  return p.map((pi, i) => target[i] - pi * t);
}
