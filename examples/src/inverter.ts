// Inverter model of the Brackenfold co-op forecaster (fictional), in float32 as it runs on the
// co-op's small monitoring board: DC power softly clipped at the inverter's 40 kW rating.

/** AC rating of the co-op's inverter, in kW. */
export const INVERTER_RATING_KW = 40;

/**
 * Soft clipping: rating · tanh(dc / rating), float32.
 * @backward inverterClipBackward
 * @sample dcPower f32[24] in [0, 60]
 */
export function inverterClip(dcPower: Float32Array): Float32Array {
  return dcPower.map((p) => INVERTER_RATING_KW * Math.tanh(p / INVERTER_RATING_KW));
}

export function inverterClipBackward(dcPower: Float32Array, dy: Float32Array): Float32Array {
  return dcPower.map((p, i) => {
    const t = Math.tanh(p / INVERTER_RATING_KW);
    return dy[i] * (1 - t * t);
  });
}
