// Float32 ops of the Quillmere Glasshouse controller (fictional), as they would run on a small
// embedded board: inputs, outputs and gradients in Float32Array. Part of the labelled accuracy
// corpus (labels.json); one backward is wrong on purpose, far above float32 roundoff.

/**
 * Fan speed curve: tanh(1.5 · command), float32.
 * @backward fanCurveBackward
 * @sample command f32[32] in [-2, 2]
 */
export function fanCurve(command: Float32Array): Float32Array {
  return command.map((c) => Math.tanh(1.5 * c));
}

export function fanCurveBackward(command: Float32Array, dy: Float32Array): Float32Array {
  return command.map((c, i) => {
    const t = Math.tanh(1.5 * c);
    return dy[i] * 1.5 * (1 - t * t);
  });
}

/**
 * Climate model readout in float32: y = W x with W 8×16 row-major (sums kept in a JS number).
 * @backward readoutF32Backward
 * @sample weight f32[8, 16]
 * @sample x f32[16] in [-2, 2]
 */
export function readoutF32(weight: Float32Array, x: Float32Array): Float32Array {
  const n = x.length;
  const y = new Float32Array(weight.length / n);
  for (let i = 0; i < y.length; i++) {
    let s = 0;
    for (let j = 0; j < n; j++) s += weight[i * n + j] * x[j];
    y[i] = s;
  }
  return y;
}

export function readoutF32Backward(
  weight: Float32Array,
  x: Float32Array,
  dy: Float32Array,
): { weight: Float32Array; x: Float32Array } {
  const n = x.length;
  const dw = new Float32Array(weight.length);
  const dx = new Float32Array(n);
  for (let j = 0; j < n; j++) {
    let s = 0;
    for (let i = 0; i < dy.length; i++) {
      dw[i * n + j] = dy[i] * x[j];
      s += weight[i * n + j] * dy[i];
    }
    dx[j] = s;
  }
  return { weight: dw, x: dx };
}

/**
 * Mode softmax in float32, rounding every intermediate to float32 as a float32 kernel would.
 * @backward modeSoftmaxF32Backward($y, $dy)
 * @sample score f32[10] in [-3, 3]
 */
export function modeSoftmaxF32(score: Float32Array): Float32Array {
  const f = Math.fround;
  let m = -Infinity;
  for (const v of score) m = Math.max(m, v);
  const p = new Float32Array(score.length);
  let z = 0;
  for (let i = 0; i < score.length; i++) {
    p[i] = f(Math.exp(f(score[i] - m)));
    z = f(z + p[i]);
  }
  for (let i = 0; i < p.length; i++) p[i] = f(p[i] / z);
  return p;
}

export function modeSoftmaxF32Backward(y: Float32Array, dy: Float32Array): Float32Array {
  const f = Math.fround;
  let s = 0;
  for (let i = 0; i < y.length; i++) s = f(s + f(dy[i] * y[i]));
  return y.map((p, i) => f(p * f(dy[i] - s)));
}

/**
 * Grow-light dimmer: perceived level = level^2.2, float32.
 * @backward dimmerCurveBackward
 * @sample level f32[24] in [0.05, 1]
 */
export function dimmerCurve(level: Float32Array): Float32Array {
  return level.map((v) => Math.pow(v, 2.2));
}

export function dimmerCurveBackward(level: Float32Array, dy: Float32Array): Float32Array {
  // BUG (labelled): the exponent factor typed as 2.25 (2.3 % relative, far above float32 noise).
  return level.map((v, i) => dy[i] * 2.25 * Math.pow(v, 1.2));
}
