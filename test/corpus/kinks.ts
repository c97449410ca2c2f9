// Non-differentiable points of the Quillmere Glasshouse controller (fictional): ReLU, absolute
// value, max with ties, a hinge exactly at its margin, clamping at its bounds and max-pooling
// with ties. No op uses `avoid`: each sample factory puts inputs exactly on a kink, and every
// backward returns a valid subgradient there. A checker may call these inconclusive or pass,
// never mismatch. Part of the labelled accuracy corpus (labels.json).

/** Heater demand samples with every third zone exactly at zero (the ReLU kink). */
export function heaterDemandOnKink(random: () => number): [Float64Array] {
  const x = new Float64Array(12);
  for (let i = 0; i < x.length; i++) x[i] = i % 3 === 0 ? 0 : 4 * random() - 2;
  return [x];
}

/**
 * Heater demand floored at zero (ReLU); the backward uses 0 at exactly zero.
 * @backward heaterFloorBackward
 * @samples heaterDemandOnKink
 */
export function heaterFloor(x: Float64Array): Float64Array {
  return x.map((v) => (v > 0 ? v : 0));
}

export function heaterFloorBackward(x: Float64Array, dy: Float64Array): Float64Array {
  return x.map((v, i) => (v > 0 ? dy[i] : 0));
}

/**
 * Valve wear penalty: Σ |move| with some valves not moving at all; sign(0) = 0 is a subgradient.
 * @backward valveWearGrad(move)
 * @samples heaterDemandOnKink
 */
export function valveWear(move: Float64Array): number {
  let s = 0;
  for (const v of move) s += Math.abs(v);
  return s;
}

export function valveWearGrad(move: Float64Array): Float64Array {
  return move.map((v) => Math.sign(v));
}

/** Two load profiles that tie exactly at every even hour. */
export function tiedLoads(random: () => number): [Float64Array, Float64Array] {
  const a = new Float64Array(10);
  const b = new Float64Array(10);
  for (let i = 0; i < a.length; i++) {
    a[i] = 3 * random();
    b[i] = i % 2 === 0 ? a[i] : 3 * random();
  }
  return [a, b];
}

/**
 * Peak load per hour: max of the two feeders; ties send the whole gradient to the first.
 * @backward peakLoadBackward
 * @samples tiedLoads
 */
export function peakLoad(a: Float64Array, b: Float64Array): Float64Array {
  return a.map((v, i) => Math.max(v, b[i]));
}

export function peakLoadBackward(a: Float64Array, b: Float64Array, dy: Float64Array): Float64Array[] {
  return [a.map((v, i) => (v >= b[i] ? dy[i] : 0)), a.map((v, i) => (v >= b[i] ? 0 : dy[i]))];
}

/**
 * Weights, three examples (row-major) and their ±1 labels; the first example sits exactly on the
 * hinge's margin (label · w·x = 1 in exact binary arithmetic), the others anywhere.
 */
export function examplesOnMargin(random: () => number): [Float64Array, Float64Array, Float64Array] {
  const w = Float64Array.from([0.5, 0.25, 0.125, 0]);
  const x = new Float64Array(12);
  x.set([1, 1, 2, 3], 0); // 0.5 + 0.25 + 0.25 + 0 = 1 exactly
  for (let i = 4; i < x.length; i++) x[i] = 4 * random() - 2;
  const labels = Float64Array.from([1, random() < 0.5 ? -1 : 1, random() < 0.5 ? -1 : 1]);
  return [w, x, labels];
}

/**
 * Mean hinge loss of the "open roof?" classifier; at the margin the backward takes the flat side.
 * @backward roofHingeBackward(w, x, labels)
 * @samples examplesOnMargin
 * @fixed labels
 */
export function roofHinge(w: Float64Array, x: Float64Array, labels: Float64Array): number {
  const d = w.length;
  let s = 0;
  for (let e = 0; e < labels.length; e++) {
    let score = 0;
    for (let j = 0; j < d; j++) score += w[j] * x[e * d + j];
    s += Math.max(0, 1 - labels[e] * score);
  }
  return s / labels.length;
}

export function roofHingeBackward(w: Float64Array, x: Float64Array, labels: Float64Array): Float64Array[] {
  const d = w.length;
  const dw = new Float64Array(d);
  const dx = new Float64Array(x.length);
  for (let e = 0; e < labels.length; e++) {
    let score = 0;
    for (let j = 0; j < d; j++) score += w[j] * x[e * d + j];
    if (1 - labels[e] * score > 0) {
      for (let j = 0; j < d; j++) {
        dw[j] -= (labels[e] * x[e * d + j]) / labels.length;
        dx[e * d + j] -= (labels[e] * w[j]) / labels.length;
      }
    }
  }
  return [dw, dx];
}

/** Vent commands with some exactly at the clamp bounds 0 and 1. */
export function ventCommandsAtBounds(random: () => number): [Float64Array] {
  const x = new Float64Array(10);
  for (let i = 0; i < x.length; i++) x[i] = i % 4 === 0 ? 0 : i % 4 === 1 ? 1 : 1.6 * random() - 0.3;
  return [x];
}

/**
 * Vent command clamped to [0, 1]; at a bound the backward passes the gradient through.
 * @backward ventClampBackward
 * @samples ventCommandsAtBounds
 */
export function ventClamp(x: Float64Array): Float64Array {
  return x.map((v) => Math.min(1, Math.max(0, v)));
}

export function ventClampBackward(x: Float64Array, dy: Float64Array): Float64Array {
  return x.map((v, i) => (v >= 0 && v <= 1 ? dy[i] : 0));
}

/** Hourly humidity with both hours of every second pair exactly equal. */
export function humidityWithTies(random: () => number): [Float64Array] {
  const x = new Float64Array(12);
  for (let i = 0; i < x.length; i += 2) {
    x[i] = 2 * random();
    x[i + 1] = (i / 2) % 2 === 0 ? x[i] : 2 * random();
  }
  return [x];
}

/**
 * Two-hour max-pooling of humidity; a tie sends the gradient to the earlier hour.
 * @backward humidityPoolBackward
 * @samples humidityWithTies
 */
export function humidityPool(x: Float64Array): Float64Array {
  const out = new Float64Array(x.length / 2);
  for (let k = 0; k < out.length; k++) out[k] = Math.max(x[2 * k], x[2 * k + 1]);
  return out;
}

export function humidityPoolBackward(x: Float64Array, dy: Float64Array): Float64Array {
  const dx = new Float64Array(x.length);
  for (let k = 0; k < dy.length; k++) {
    if (x[2 * k] >= x[2 * k + 1]) dx[2 * k] = dy[k];
    else dx[2 * k + 1] = dy[k];
  }
  return dx;
}
