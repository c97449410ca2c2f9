// Ops of the Quillmere Glasshouse controller (fictional) that cannot be checked: a forward that
// throws, a backward of the wrong shape or returning NaN, a backward that does not exist, a
// parameter without a sample, a bad sample spec, a forward that overwrites its input, an
// infinite output, a number-less backward list on an array output. Each must be reported as
// `error` with a clear message. Part of the labelled accuracy corpus (labels.json).

/** Per-zone calibration factors, loaded from the controller at start-up (never, here). */
let zoneCalibration: Float64Array | null = null;

/** Loads the calibration table (nobody calls it before the check). */
export function loadZoneCalibration(table: Float64Array): void {
  zoneCalibration = table;
}

/**
 * Zone calibration that needs a table nobody loaded.
 * @backward uncalibratedZoneBackward
 * @sample x f64[8]
 */
export function uncalibratedZone(x: Float64Array): Float64Array {
  const table = zoneCalibration;
  if (table === null) throw new Error('calibration table not loaded');
  return x.map((v, i) => v * table[i]);
}

export function uncalibratedZoneBackward(_x: Float64Array, dy: Float64Array): Float64Array {
  return dy;
}

/**
 * Shade scaling whose backward drops the last element.
 * @backward shadeScaleBackward
 * @sample x f64[8]
 */
export function shadeScale(x: Float64Array): Float64Array {
  return x.map((v) => 0.8 * v);
}

export function shadeScaleBackward(x: Float64Array, dy: Float64Array): Float64Array {
  return new Float64Array(x.length - 1).map((_, i) => 0.8 * dy[i]);
}

/**
 * Root-zone pressure: √(x + 2); the backward takes the root of x − 2 (always negative here).
 * @backward rootPressureBackward
 * @sample x f64[8]
 */
export function rootPressure(x: Float64Array): Float64Array {
  return x.map((v) => Math.sqrt(v + 2));
}

export function rootPressureBackward(x: Float64Array, dy: Float64Array): Float64Array {
  return x.map((v, i) => (0.5 * dy[i]) / Math.sqrt(v - 2));
}

/**
 * Irrigation pulse whose backward is named wrong in the tag (the function is irrigationPulseGradient).
 * @backward irrigationPulseBackward
 * @sample x f64[8]
 */
export function irrigationPulse(x: Float64Array): Float64Array {
  return x.map((v) => 2 * v);
}

export function irrigationPulseGradient(_x: Float64Array, dy: Float64Array): Float64Array {
  return dy.map((g) => 2 * g);
}

/**
 * Blend of two sensor feeds; `weight` has no sample.
 * @backward sensorBlendBackward
 * @sample a f64[6]
 */
export function sensorBlend(a: Float64Array, weight: number): Float64Array {
  return a.map((v) => weight * v);
}

export function sensorBlendBackward(a: Float64Array, weight: number, dy: Float64Array): [Float64Array, number] {
  let dWeight = 0;
  for (let i = 0; i < a.length; i++) dWeight += dy[i] * a[i];
  return [dy.map((g) => g * weight), dWeight];
}

/**
 * Drip rate with a sample spec in an element type that does not exist.
 * @backward dripRateBackward
 * @sample x float64[8]
 */
export function dripRate(x: Float64Array): Float64Array {
  return x.map((v) => 3 * v);
}

export function dripRateBackward(_x: Float64Array, dy: Float64Array): Float64Array {
  return dy.map((g) => 3 * g);
}

/**
 * Light levels normalised to their peak, in place: the forward overwrites its input.
 * @backward normaliseLightBackward
 * @sample x f64[8] in [0.5, 2]
 */
export function normaliseLight(x: Float64Array): Float64Array {
  let peak = 0;
  for (const v of x) peak = Math.max(peak, v);
  for (let i = 0; i < x.length; i++) x[i] /= peak;
  return x;
}

export function normaliseLightBackward(_x: Float64Array, dy: Float64Array): Float64Array {
  return dy;
}

/** Weights of the zones that report heat flux: none are configured yet. */
const FLUX_ZONE_WEIGHTS: number[] = [];

/**
 * Heat flux share: reading divided by the total configured weight, which is zero (Infinity out).
 * @backward heatFluxShareBackward
 * @sample x f64[8] in [0.5, 2]
 */
export function heatFluxShare(x: Float64Array): Float64Array {
  const total = FLUX_ZONE_WEIGHTS.reduce((s, w) => s + w, 0);
  return x.map((v) => v / total);
}

export function heatFluxShareBackward(_x: Float64Array, dy: Float64Array): Float64Array {
  const total = FLUX_ZONE_WEIGHTS.reduce((s, w) => s + w, 0);
  return dy.map((g) => g / total);
}

/**
 * Condenser duty: returns an array, but the backward list has no $dy (only allowed for a number).
 * @backward condenserDutyGrad(x)
 * @sample x f64[8]
 */
export function condenserDuty(x: Float64Array): Float64Array {
  return x.map((v) => v * v);
}

export function condenserDutyGrad(x: Float64Array): Float64Array {
  return x.map((v) => 2 * v);
}
