// The Brackenfold Community Solar Co-op's day-ahead forecaster (a fictional co-op): physics first
// (temperature derating, inverter clipping), then a learned hourly correction blended in by
// attention over today's clear-sky ratios. Each piece's gradient is hand-written beside it.

import { hourAttention } from './attention';
import { derate } from './derating';
import { inverterClip } from './inverter';
import { dense, layerNorm, softplus } from './layers';
import { IrradianceMemory } from './memory';
import type { DayWeather } from './weather';

/** Everything the forecaster learns. */
export interface ForecasterParams {
  heatRise: number;
  tempLoss: number;
  memoryAlpha: number;
  memoryWeight: number;
  normGain: Float64Array; // 12
  normShift: Float64Array; // 12
  correctionWeight: Float64Array; // 8 × 6, row-major
  correctionBias: Float64Array; // 8
  attentionScore: Float64Array; // 24
}

/** Tomorrow's AC output per hour (kW) from tomorrow's weather forecast and today's metered ratios. */
export function forecastDay(weather: DayWeather, todayClearSkyRatio: Float64Array, p: ForecasterParams): Float64Array {
  const physical = derate(weather.irradiance, weather.airTemp, p.heatRise, p.tempLoss);
  const ac = Float64Array.from(inverterClip(Float32Array.from(physical)));

  const memory = new IrradianceMemory();
  memory.alpha = p.memoryAlpha;
  memory.weight = p.memoryWeight;
  const trace = memory.trace(weather.irradiance);

  // Twelve features: six summaries of the day, each for morning and afternoon.
  const features = new Float64Array(12);
  for (let half = 0; half < 2; half++) {
    const hours = Array.from({ length: 12 }, (_, k) => half * 12 + k);
    const mean = (a: Float64Array): number => hours.reduce((s, h) => s + a[h], 0) / 12;
    features.set([mean(weather.irradiance), mean(weather.airTemp) / 10, mean(weather.cloud), mean(trace), mean(ac) / 10, 1], half * 6);
  }
  const normed = layerNorm(features, p.normGain, p.normShift);
  const correction = softplus(dense(normed.subarray(0, 6), p.correctionWeight, p.correctionBias));
  const ratio = hourAttention(p.attentionScore, todayClearSkyRatio, { temperature: 0.5 });

  // The correction's eight values each cover three hours.
  return ac.map((kw, h) => kw * ratio * (0.5 + 0.5 * correction[Math.floor(h / 3)]));
}
