// Synthetic weather for the Brackenfold co-op demo (fictional): a seeded, made-up day of hourly
// irradiance, air temperature and cloud cover. No measured data from anywhere.

export interface DayWeather {
  /** Plane-of-array irradiance per hour, kW/m². */
  irradiance: Float64Array;
  /** Air temperature per hour, °C. */
  airTemp: Float64Array;
  /** Cloud cover per hour, 0 (clear) to 1 (overcast). */
  cloud: Float64Array;
}

/** A seeded uniform generator on [0, 1) (a 32-bit linear congruential step, common practice). */
function lcg(seed: number): () => number {
  let state = seed >>> 0;
  return () => {
    state = (Math.imul(state, 1664525) + 1013904223) >>> 0;
    return state / 4294967296;
  };
}

/** One synthetic day: sun up from 06:00 to 18:00, clouds drifting, a mild afternoon peak in temperature. */
export function syntheticDay(seed: number): DayWeather {
  const random = lcg(seed);
  const irradiance = new Float64Array(24);
  const airTemp = new Float64Array(24);
  const cloud = new Float64Array(24);
  let c = random();
  for (let h = 0; h < 24; h++) {
    c = Math.min(1, Math.max(0, c + 0.3 * (random() - 0.5)));
    cloud[h] = c;
    const sun = Math.max(0, Math.sin((Math.PI * (h - 6)) / 12));
    irradiance[h] = sun * (1 - 0.7 * c);
    airTemp[h] = 11 + 9 * Math.sin((Math.PI * (h - 9)) / 12) + 2 * (random() - 0.5);
  }
  return { irradiance, airTemp, cloud };
}
