// Ops of the Quillmere Glasshouse controller (fictional) with several named outputs, and ops
// whose inputs come from a seeded sample factory (`@samples`) with fixed targets and masks.
// Part of the labelled accuracy corpus (labels.json); some backwards are wrong on purpose.

import { sum } from './util';

/**
 * Zone statistics: mean and (population) variance of sixteen zone temperatures.
 * @backward zoneStatsBackward
 * @sample x f64[16] in [0, 2]
 */
export function zoneStats(x: Float64Array): { mean: number; variance: number } {
  const n = x.length;
  const mean = sum(x) / n;
  let v = 0;
  for (const t of x) v += (t - mean) ** 2;
  return { mean, variance: v / n };
}

export function zoneStatsBackward(x: Float64Array, dy: { mean: number; variance: number }): Float64Array {
  const n = x.length;
  const mean = sum(x) / n;
  return x.map((t) => dy.mean / n + (dy.variance * 2 * (t - mean)) / n);
}

/**
 * Bench statistics: mean and variance of sixteen bench moistures (same maths).
 * @backward benchStatsBackward
 * @sample x f64[16] in [0, 2]
 */
export function benchStats(x: Float64Array): { mean: number; variance: number } {
  return zoneStats(x);
}

export function benchStatsBackward(x: Float64Array, dy: { mean: number; variance: number }): Float64Array {
  const n = x.length;
  // BUG (labelled): the variance gradient is not centred (2·x/n instead of 2·(x − mean)/n).
  return x.map((t) => dy.mean / n + (dy.variance * 2 * t) / n);
}

/**
 * Heat and moisture balance: heat kept per zone, and moisture driven out by the vent.
 * @backward climateBalanceBackward
 * @sample heatIn num[6] in [0, 5]
 * @sample vent num in [0.1, 0.9]
 */
export function climateBalance(heatIn: number[], vent: number): { heat: number[]; moisture: number } {
  return { heat: heatIn.map((h) => h * (1 - vent)), moisture: vent * vent * sum(heatIn) };
}

export function climateBalanceBackward(
  heatIn: number[],
  vent: number,
  dy: { heat: number[]; moisture: number },
): { heatIn: number[]; vent: number } {
  const total = sum(heatIn);
  let dVent = 2 * vent * total * dy.moisture;
  for (let i = 0; i < heatIn.length; i++) dVent -= dy.heat[i] * heatIn[i];
  return { heatIn: dy.heat.map((g) => g * (1 - vent) + vent * vent * dy.moisture), vent: dVent };
}

/**
 * Sample factory for the masked losses: predictions, targets and a mask with every third
 * sensor masked out (a dead sensor).
 */
export function makeMaskedSample(random: () => number): [Float64Array, Float64Array, Float64Array] {
  const n = 12;
  const prediction = new Float64Array(n);
  const target = new Float64Array(n);
  const mask = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    prediction[i] = 15 + 10 * random();
    target[i] = 15 + 10 * random();
    mask[i] = i % 3 === 0 ? 0 : 1;
  }
  return [prediction, target, mask];
}

/**
 * Masked mean squared error of the temperature forecast over the live sensors.
 * @backward maskedForecastErrorGrad(prediction, target, mask)
 * @samples makeMaskedSample
 * @fixed target, mask
 */
export function maskedForecastError(prediction: Float64Array, target: Float64Array, mask: Float64Array): number {
  let s = 0;
  for (let i = 0; i < prediction.length; i++) s += mask[i] * (prediction[i] - target[i]) ** 2;
  return s / sum(mask);
}

export function maskedForecastErrorGrad(prediction: Float64Array, target: Float64Array, mask: Float64Array): Float64Array {
  const live = sum(mask);
  return prediction.map((p, i) => (2 * mask[i] * (p - target[i])) / live);
}

/**
 * Masked mean squared error of the humidity forecast (same maths).
 * @backward maskedHumidityErrorGrad(prediction, target, mask)
 * @samples makeMaskedSample
 * @fixed target, mask
 */
export function maskedHumidityError(prediction: Float64Array, target: Float64Array, mask: Float64Array): number {
  return maskedForecastError(prediction, target, mask);
}

export function maskedHumidityErrorGrad(prediction: Float64Array, target: Float64Array, mask: Float64Array): Float64Array {
  const live = sum(mask);
  // BUG (labelled): the mask is forgotten, so dead sensors get a gradient.
  return prediction.map((p, i) => (2 * (p - target[i])) / live);
}
