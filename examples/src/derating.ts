// Panel-temperature derating of the Brackenfold Community Solar Co-op forecaster (a fictional
// co-op): hot cells make less power. Both coefficients are learned from the co-op's own meter.

/** Effective panel area of the co-op's array, in m² (120 panels on the grain-store roof). */
export const PANEL_AREA_M2 = 240;
/** Module efficiency at the 25 °C reference cell temperature. */
export const REFERENCE_EFFICIENCY = 0.2;

/**
 * AC-side power per hour (kW) from irradiance (kW/m²) and air temperature (°C).
 * Cell temperature = air + heatRise · irradiance; power falls by tempLoss per °C above 25 °C.
 * @backward derateBackward
 * @sample irradiance f64[24] in [0, 1] fixed
 * @sample airTemp f64[24] in [-5, 35] fixed
 * @sample heatRise num in [20, 35]
 * @sample tempLoss num in [0.003, 0.005]
 */
export function derate(irradiance: Float64Array, airTemp: Float64Array, heatRise: number, tempLoss: number): Float64Array {
  return irradiance.map((g, h) => {
    const cell = airTemp[h] + heatRise * g;
    return PANEL_AREA_M2 * REFERENCE_EFFICIENCY * g * (1 - tempLoss * (cell - 25));
  });
}

export function derateBackward(
  irradiance: Float64Array,
  airTemp: Float64Array,
  heatRise: number,
  tempLoss: number,
  dy: Float64Array,
): { heatRise: number; tempLoss: number } {
  let dHeatRise = 0;
  let dTempLoss = 0;
  for (let h = 0; h < irradiance.length; h++) {
    const g = irradiance[h];
    const cell = airTemp[h] + heatRise * g;
    const scale = PANEL_AREA_M2 * REFERENCE_EFFICIENCY * g * dy[h];
    dHeatRise -= scale * tempLoss * g;
    // DEMO BUG: sign flipped. Power falls as tempLoss grows, so this term must be subtracted.
    dTempLoss += scale * (cell - 25);
  }
  return { heatRise: dHeatRise, tempLoss: dTempLoss };
}
