// Training loss of the Brackenfold co-op forecaster (fictional): Huber-type, quadratic for small
// errors and linear for large ones, so one cloudy-hour outlier does not dominate.

/** Error in kW where the loss turns from quadratic to linear. */
export const HUBER_DELTA_KW = 2;

/**
 * Mean Huber loss of the hourly forecast (kW) against the metered output (kW).
 * @backward huberLossGrad(forecast, metered)
 * @sample forecast f64[24] in [0, 20]
 * @sample metered f64[24] in [0, 20] fixed
 */
export function huberLoss(forecast: Float64Array, metered: Float64Array): number {
  let s = 0;
  for (let h = 0; h < forecast.length; h++) {
    const r = Math.abs(forecast[h] - metered[h]);
    s += r <= HUBER_DELTA_KW ? 0.5 * r * r : HUBER_DELTA_KW * (r - 0.5 * HUBER_DELTA_KW);
  }
  return s / forecast.length;
}

export function huberLossGrad(forecast: Float64Array, metered: Float64Array): Float64Array {
  return forecast.map((f, h) => {
    const r = f - metered[h];
    const clipped = Math.max(-HUBER_DELTA_KW, Math.min(HUBER_DELTA_KW, r));
    return clipped / forecast.length;
  });
}
