// Linear maps of the Quillmere Glasshouse controller (fictional): zone mixing, sensor cross-talk
// correction, dense layers, 1-D convolution over time and table lookups. Part of the labelled
// accuracy corpus (labels.json); some backwards are wrong on purpose.

/**
 * Zone-to-actuator mixing: a (3×4) times b (4×2), as nested arrays.
 * @backward mixZonesBackward
 * @sample a num[3, 4]
 * @sample b num[4, 2]
 */
export function mixZones(a: number[][], b: number[][]): number[][] {
  return a.map((row) => b[0].map((_, j) => row.reduce((s, v, k) => s + v * b[k][j], 0)));
}

export function mixZonesBackward(a: number[][], b: number[][], dy: number[][]): [number[][], number[][]] {
  // dA = dY Bᵀ, dB = Aᵀ dY.
  const da = a.map((row, i) => row.map((_, k) => dy[i].reduce((s, g, j) => s + g * b[k][j], 0)));
  const db = b.map((row, k) => row.map((_, j) => a.reduce((s, aRow, i) => s + aRow[k] * dy[i][j], 0)));
  return [da, db];
}

/**
 * Sensor cross-talk correction: y = W x with a square 4×4 correction matrix.
 * @backward crossTalkBackward
 * @sample w num[4, 4]
 * @sample x num[4]
 */
export function crossTalk(w: number[][], x: number[]): number[] {
  return w.map((row) => row.reduce((s, v, j) => s + v * x[j], 0));
}

export function crossTalkBackward(w: number[][], x: number[], dy: number[]): { w: number[][]; x: number[] } {
  // BUG (labelled): dW[i][j] should be dy[i]·x[j]; this is its transpose.
  const dw = w.map((row, i) => row.map((_, j) => x[i] * dy[j]));
  const dx = x.map((_, j) => w.reduce((s, row, i) => s + row[j] * dy[i], 0));
  return { w: dw, x: dx };
}

/**
 * Dense layer of the humidity model: y = W x + b, W stored row-major (4 outputs × 6 inputs).
 * @backward denseBackward
 * @sample x f64[6]
 * @sample weight f64[4, 6]
 * @sample bias f64[4]
 */
export function dense(x: Float64Array, weight: Float64Array, bias: Float64Array): Float64Array {
  const n = x.length;
  const y = new Float64Array(bias.length);
  for (let i = 0; i < bias.length; i++) {
    let s = bias[i];
    for (let j = 0; j < n; j++) s += weight[i * n + j] * x[j];
    y[i] = s;
  }
  return y;
}

export function denseBackward(
  x: Float64Array,
  weight: Float64Array,
  bias: Float64Array,
  dy: Float64Array,
): { x: Float64Array; weight: Float64Array; bias: Float64Array } {
  const n = x.length;
  const dx = new Float64Array(n);
  const dw = new Float64Array(weight.length);
  for (let i = 0; i < bias.length; i++) {
    for (let j = 0; j < n; j++) {
      dw[i * n + j] = dy[i] * x[j];
      dx[j] += weight[i * n + j] * dy[i];
    }
  }
  return { x: dx, weight: dw, bias: Float64Array.from(dy) };
}

/**
 * Per-channel scale and shift of the eight light channels: y = weight ⊙ x + bias.
 * @backward channelScaleBackward
 * @sample x f64[8] in [0, 4]
 * @sample weight f64[8] in [0.5, 1.5]
 * @sample bias f64[8]
 */
export function channelScale(x: Float64Array, weight: Float64Array, bias: Float64Array): Float64Array {
  return x.map((v, i) => weight[i] * v + bias[i]);
}

export function channelScaleBackward(
  x: Float64Array,
  weight: Float64Array,
  _bias: Float64Array,
  dy: Float64Array,
): { x: Float64Array; weight: Float64Array; bias: Float64Array } {
  // BUG (labelled): dweight and dbias swapped (dweight is dy ⊙ x, dbias is dy).
  return { x: dy.map((g, i) => g * weight[i]), weight: Float64Array.from(dy), bias: dy.map((g, i) => g * x[i]) };
}

/**
 * Temperature trend filter: valid 1-D cross-correlation of a 20-step signal with a 5-tap kernel.
 * @backward trendFilterBackward
 * @sample signal f64[20] in [-2, 2]
 * @sample kernel f64[5]
 */
export function trendFilter(signal: Float64Array, kernel: Float64Array): Float64Array {
  const out = new Float64Array(signal.length - kernel.length + 1);
  for (let t = 0; t < out.length; t++) {
    let s = 0;
    for (let k = 0; k < kernel.length; k++) s += signal[t + k] * kernel[k];
    out[t] = s;
  }
  return out;
}

export function trendFilterBackward(signal: Float64Array, kernel: Float64Array, dy: Float64Array): Float64Array[] {
  const dSignal = new Float64Array(signal.length);
  const dKernel = new Float64Array(kernel.length);
  for (let t = 0; t < dy.length; t++) {
    for (let k = 0; k < kernel.length; k++) {
      dSignal[t + k] += dy[t] * kernel[k];
      dKernel[k] += dy[t] * signal[t + k];
    }
  }
  return [dSignal, dKernel];
}

/**
 * Irrigation smoothing: the same valid 1-D cross-correlation (24-step signal, 4-tap kernel).
 * @backward irrigationSmoothBackward
 * @sample signal f64[24] in [0, 3]
 * @sample kernel f64[4]
 */
export function irrigationSmooth(signal: Float64Array, kernel: Float64Array): Float64Array {
  return trendFilter(signal, kernel);
}

export function irrigationSmoothBackward(signal: Float64Array, kernel: Float64Array, dy: Float64Array): Float64Array[] {
  const dSignal = new Float64Array(signal.length);
  const dKernel = new Float64Array(kernel.length);
  const outLen = signal.length - kernel.length + 1;
  // BUG (labelled): off by one at the loop boundary: the last output step is never visited.
  for (let t = 0; t < outLen - 1; t++) {
    for (let k = 0; k < kernel.length; k++) {
      dSignal[t + k] += dy[t] * kernel[k];
      dKernel[k] += dy[t] * signal[t + k];
    }
  }
  return [dSignal, dKernel];
}

/**
 * Crop-profile lookup: rows of a 6×3 table picked by twelve integer indices (so some repeat).
 * @backward cropProfileBackward
 * @sample table f64[6, 3]
 * @sample rows i32[12] in [0, 5]
 */
export function cropProfile(table: Float64Array, rows: Int32Array): Float64Array {
  const width = 3;
  const out = new Float64Array(rows.length * width);
  rows.forEach((r, i) => {
    for (let c = 0; c < width; c++) out[i * width + c] = table[r * width + c];
  });
  return out;
}

export function cropProfileBackward(table: Float64Array, rows: Int32Array, dy: Float64Array): Float64Array {
  const width = 3;
  const dTable = new Float64Array(table.length);
  rows.forEach((r, i) => {
    for (let c = 0; c < width; c++) dTable[r * width + c] += dy[i * width + c];
  });
  return dTable;
}

/**
 * Nutrient-recipe lookup: the same gather (6×3 table, twelve indices, repeats guaranteed).
 * @backward nutrientRecipeBackward
 * @sample table f64[6, 3]
 * @sample rows i32[12] in [0, 5]
 */
export function nutrientRecipe(table: Float64Array, rows: Int32Array): Float64Array {
  return cropProfile(table, rows);
}

export function nutrientRecipeBackward(table: Float64Array, rows: Int32Array, dy: Float64Array): Float64Array {
  const width = 3;
  const dTable = new Float64Array(table.length);
  rows.forEach((r, i) => {
    // BUG (labelled): '=' instead of '+=': a row picked twice keeps only its last gradient.
    for (let c = 0; c < width; c++) dTable[r * width + c] = dy[i * width + c];
  });
  return dTable;
}
