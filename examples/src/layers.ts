// The small neural correction of the Brackenfold co-op forecaster (fictional): a dense layer,
// softplus to keep output non-negative, and a layer norm over the weather features.

/**
 * Dense layer: y = W x + b, with W stored row-major (8 outputs × 6 weather features).
 * @backward denseBackward
 * @sample x f64[6]
 * @sample weight f64[8, 6]
 * @sample bias f64[8]
 */
export function dense(x: Float64Array, weight: Float64Array, bias: Float64Array): Float64Array {
  const n = x.length;
  return bias.map((b, i) => {
    let s = b;
    for (let j = 0; j < n; j++) s += weight[i * n + j] * x[j];
    return s;
  });
}

export function denseBackward(
  x: Float64Array,
  weight: Float64Array,
  bias: Float64Array,
  dy: Float64Array,
): { x: Float64Array; weight: Float64Array; bias: Float64Array } {
  const n = x.length;
  const dx = new Float64Array(n);
  const dWeight = new Float64Array(weight.length);
  for (let i = 0; i < bias.length; i++) {
    for (let j = 0; j < n; j++) {
      dWeight[i * n + j] = dy[i] * x[j];
      dx[j] += weight[i * n + j] * dy[i];
    }
  }
  return { x: dx, weight: dWeight, bias: Float64Array.from(dy) };
}

/**
 * Softplus: a smooth floor at zero, so a forecast never goes negative.
 * @backward softplusBackward
 * @sample x f64[24] in [-8, 8]
 */
export function softplus(x: Float64Array): Float64Array {
  // log(1 + e^x), split at zero so exp never overflows.
  return x.map((v) => (v > 0 ? v + Math.log1p(Math.exp(-v)) : Math.log1p(Math.exp(v))));
}

export function softplusBackward(x: Float64Array, dy: Float64Array): Float64Array {
  return x.map((v, i) => dy[i] / (1 + Math.exp(-v)));
}

/**
 * Layer norm over the weather features, with learned gain and shift.
 * @backward layerNormBackward
 * @sample x f64[12] in [-3, 3]
 * @sample gain f64[12] in [0.5, 1.5]
 * @sample shift f64[12]
 */
export function layerNorm(x: Float64Array, gain: Float64Array, shift: Float64Array): Float64Array {
  const { centred, invStd } = standardise(x);
  return centred.map((c, i) => gain[i] * c * invStd + shift[i]);
}

export function layerNormBackward(
  x: Float64Array,
  gain: Float64Array,
  _shift: Float64Array,
  dy: Float64Array,
): { x: Float64Array; gain: Float64Array; shift: Float64Array } {
  const n = x.length;
  const { centred, invStd } = standardise(x);
  const xhat = centred.map((c) => c * invStd);
  const g = dy.map((d, i) => d * gain[i]);
  let meanG = 0;
  let meanGX = 0;
  for (let i = 0; i < n; i++) {
    meanG += g[i] / n;
    meanGX += (g[i] * xhat[i]) / n;
  }
  return {
    x: g.map((gi, i) => invStd * (gi - meanG - xhat[i] * meanGX)),
    gain: dy.map((d, i) => d * xhat[i]),
    shift: Float64Array.from(dy),
  };
}

/** Variance floor of the layer norm, so a flat feature vector does not divide by zero. */
const NORM_EPS = 1e-5;

function standardise(x: Float64Array): { centred: Float64Array; invStd: number } {
  let mean = 0;
  for (const v of x) mean += v / x.length;
  const centred = x.map((v) => v - mean);
  let variance = 0;
  for (const c of centred) variance += (c * c) / x.length;
  return { centred, invStd: 1 / Math.sqrt(variance + NORM_EPS) };
}
