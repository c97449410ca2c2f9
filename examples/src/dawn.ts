// Dawn start-up of the Brackenfold co-op's inverter (fictional): below a wake-up irradiance it
// ramps in softly instead of switching on at once. The demo's samples are all daytime values,
// so the ramp's branch never runs during the check: the report marks it as never reached.

/** Irradiance (W/m²) below which the inverter is still ramping in. */
export const DAWN_W_M2 = 100;

/** Array output per unit irradiance, kW per W/m² (40 kW at 1000 W/m²). */
export const KW_PER_W_M2 = 0.04;

/**
 * Hourly array output (kW) from plane-of-array irradiance (W/m²): quadratic ramp below dawn
 * level, linear above; value and slope agree at the join, so the curve is smooth.
 * @backward dawnRampBackward
 * @sample irradiance f64[24] in [200, 1000]
 */
export function dawnRamp(irradiance: Float64Array): Float64Array {
  const out = new Float64Array(irradiance.length);
  for (let h = 0; h < irradiance.length; h++) {
    const g = irradiance[h];
    const effective = g < DAWN_W_M2 ? (g * g) / (2 * DAWN_W_M2) : g - DAWN_W_M2 / 2;
    out[h] = KW_PER_W_M2 * effective;
  }
  return out;
}

export function dawnRampBackward(irradiance: Float64Array, dy: Float64Array): Float64Array {
  const grad = new Float64Array(irradiance.length);
  for (let h = 0; h < irradiance.length; h++) {
    if (irradiance[h] < DAWN_W_M2) {
      // DEMO GAP: samples drawn from [200, 1000] never reach this branch; the check says nothing about it.
      grad[h] = KW_PER_W_M2 * (irradiance[h] / DAWN_W_M2) * dy[h];
    } else {
      grad[h] = KW_PER_W_M2 * dy[h];
    }
  }
  return grad;
}
