// Elementwise ops of the Quillmere Glasshouse climate controller (a fictional greenhouse):
// sensor conditioning and actuator response curves. Part of the labelled accuracy corpus
// (labels.json); some backwards here are wrong on purpose, as the labels say.

import { logistic } from './util';

/**
 * Heater demand through softplus: a smooth floor at zero.
 * @backward heaterSoftplusBackward
 * @sample demand f64[24] in [-6, 6]
 */
export function heaterSoftplus(demand: Float64Array): Float64Array {
  const out = new Float64Array(demand.length);
  for (let i = 0; i < demand.length; i++) {
    const z = demand[i];
    // Split at zero so exp never overflows.
    out[i] = z > 0 ? z + Math.log1p(Math.exp(-z)) : Math.log1p(Math.exp(z));
  }
  return out;
}

export function heaterSoftplusBackward(demand: Float64Array, dy: Float64Array): Float64Array {
  const dx = new Float64Array(demand.length);
  for (let i = 0; i < demand.length; i++) dx[i] = dy[i] * logistic(demand[i]);
  return dx;
}

/**
 * Vent opening command squashed to (0, 1); the backward reuses the output.
 * @backward ventSigmoidBackward($y, $dy)
 * @sample command f64[16] in [-4, 4]
 */
export const ventSigmoid = (command: Float64Array): Float64Array => command.map((c) => logistic(c));

export const ventSigmoidBackward = (y: Float64Array, dy: Float64Array): Float64Array =>
  y.map((v, i) => dy[i] * v * (1 - v));

/**
 * Circulation fan drive: tanh of the fan command.
 * @backward fanDriveBackward($y, $dy)
 * @sample command f64[16] in [-2, 2]
 */
export const fanDrive = function (command: Float64Array): Float64Array {
  return command.map((c) => Math.tanh(c));
};

export function fanDriveBackward(y: Float64Array, dy: Float64Array): Float64Array {
  // BUG (labelled): the derivative of tanh is 1 - y², not 1 - y.
  return y.map((v, i) => dy[i] * (1 - v));
}

/**
 * Saturation vapour pressure of the air (kPa) from its temperature (°C), with the controller's
 * own fitted constants.
 * @backward vapourPressureBackward
 * @sample temperature f64[12] in [5, 35]
 */
export function vapourPressure(temperature: Float64Array): Float64Array {
  return temperature.map((t) => 0.6 * Math.exp((17 * t) / (t + 240)));
}

export function vapourPressureBackward(temperature: Float64Array, dy: Float64Array): Float64Array {
  return temperature.map((t, i) => {
    const p = 0.6 * Math.exp((17 * t) / (t + 240));
    return dy[i] * p * ((17 * 240) / ((t + 240) * (t + 240)));
  });
}

/**
 * Humidity ratio on a decade scale: log10 of the reading.
 * @backward humidityDecadesBackward
 * @sample ratio f64[12] in [0.05, 2]
 */
export function humidityDecades(ratio: Float64Array): Float64Array {
  return ratio.map((r) => Math.log(r) / Math.LN10);
}

export function humidityDecadesBackward(ratio: Float64Array, dy: Float64Array): Float64Array {
  // BUG (labelled): ln 10 typed by hand as 2.3028 (true 2.302585...): 9e-5 relative.
  return ratio.map((r, i) => dy[i] / (r * 2.3028));
}

/**
 * Position in the day as a sine wave over 24 hours.
 * @backward diurnalPhaseBackward
 * @sample hour f64[24] in [0, 24]
 */
export function diurnalPhase(hour: Float64Array): Float64Array {
  return hour.map((h) => Math.sin((2 * Math.PI * h) / 24));
}

export function diurnalPhaseBackward(hour: Float64Array, dy: Float64Array): Float64Array {
  // BUG (labelled): π typed as 3.1416 in the chain-rule factor: 2.3e-6 relative.
  return hour.map((h, i) => dy[i] * ((2 * 3.1416) / 24) * Math.cos((2 * Math.PI * h) / 24));
}

/**
 * Frost response: identity above zero, a scaled exponential approach below (alpha 1.7).
 * @backward frostResponseBackward
 * @sample margin f64[16] in [-3, 3]
 */
export function frostResponse(margin: Float64Array): Float64Array {
  return margin.map((m) => (m > 0 ? m : 1.7 * (Math.exp(m) - 1)));
}

export function frostResponseBackward(margin: Float64Array, dy: Float64Array): Float64Array {
  // BUG (labelled): the negative branch forgets the factor alpha = 1.7.
  return margin.map((m, i) => dy[i] * (m > 0 ? 1 : Math.exp(m)));
}

/**
 * Condensation risk: mean squared gap between leaf surface temperature and the dew point.
 * @backward condensationRiskGrad(surfaceTemp, dewPoint)
 * @sample surfaceTemp f64[8] in [2, 20]
 * @sample dewPoint f64[8] in [2, 20] fixed
 */
export function condensationRisk(surfaceTemp: Float64Array, dewPoint: Float64Array): number {
  let s = 0;
  for (let i = 0; i < surfaceTemp.length; i++) s += (surfaceTemp[i] - dewPoint[i]) ** 2;
  return s / surfaceTemp.length;
}

export function condensationRiskGrad(surfaceTemp: Float64Array, dewPoint: Float64Array): Float64Array {
  // BUG (labelled): d/dt (t - d)² is 2(t - d); the factor 2 is missing.
  return surfaceTemp.map((t, i) => (t - dewPoint[i]) / surfaceTemp.length);
}

/**
 * Light reaching the canopy: shade fraction times outside irradiance (hundreds of W/m²).
 * @backward canopyLightBackward
 * @sample shade f64[10] in [0, 1]
 * @sample irradiance f64[10] in [2, 9]
 */
export function canopyLight(shade: Float64Array, irradiance: Float64Array): Float64Array {
  return shade.map((s, i) => s * irradiance[i]);
}

export function canopyLightBackward(shade: Float64Array, irradiance: Float64Array, dy: Float64Array): Float64Array[] {
  // BUG (labelled): the two gradients are swapped (d/dshade is dy·irradiance).
  return [shade.map((s, i) => dy[i] * s), irradiance.map((r, i) => dy[i] * r)];
}

/** Heating gain of each of the eight zones. */
const ZONE_GAIN = [0.8, 1.1, 0.95, 1.3, 0.7, 0.53, 1.05, 0.9];

/**
 * Heating effort per zone: gain × drive², with a fixed gain per zone.
 * @backward zoneEffortBackward
 * @sample drive f64[8] in [-2, 2]
 */
export function zoneEffort(drive: Float64Array): Float64Array {
  return drive.map((d, i) => ZONE_GAIN[i] * d * d);
}

export function zoneEffortBackward(drive: Float64Array, dy: Float64Array): Float64Array {
  // BUG (labelled): a hand-copied gain table with zone 5 typed as 0.35 instead of 0.53.
  const gains = [0.8, 1.1, 0.95, 1.3, 0.7, 0.35, 1.05, 0.9];
  return drive.map((d, i) => dy[i] * 2 * gains[i] * d);
}

/**
 * Pump pressure curve: flow raised to an integer exponent drawn per check (not differentiated).
 * @backward pumpCurveBackward
 * @sample flow f64[8] in [0.5, 2]
 * @sample exponent int in [2, 4]
 */
export function pumpCurve(flow: Float64Array, exponent: number): Float64Array {
  return flow.map((q) => q ** exponent);
}

export function pumpCurveBackward(flow: Float64Array, exponent: number, dy: Float64Array): Float64Array {
  return flow.map((q, i) => dy[i] * exponent * q ** (exponent - 1));
}

/**
 * Sensor calibration: gain × reading + offset, with scalar gain and offset.
 * @backward calibrateBackward
 * @sample reading f64[8] in [10, 30]
 * @sample gain num in [0.9, 1.1]
 * @sample offset num in [-2, 2]
 */
export function calibrate(reading: Float64Array, gain: number, offset: number): Float64Array {
  return reading.map((r) => gain * r + offset);
}

export function calibrateBackward(
  reading: Float64Array,
  gain: number,
  _offset: number,
  dy: Float64Array,
): { reading: Float64Array; gain: number; offset: number } {
  let dGain = 0;
  let dOffset = 0;
  for (let i = 0; i < reading.length; i++) {
    dGain += dy[i] * reading[i];
    dOffset += dy[i];
  }
  return { reading: dy.map((d) => d * gain), gain: dGain, offset: dOffset };
}
