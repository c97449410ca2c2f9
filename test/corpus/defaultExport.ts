// Shape (docs/code-shapes.md): an op that is the module's anonymous default export.

/**
 * Cube root response of the Quillmere Glasshouse humidity sensor.
 * @backward humidityResponseBackward
 * @sample h f64[5] in [0.2, 3]
 */
export default function (h: Float64Array): Float64Array {
  return h.map((v) => Math.cbrt(v));
}

export function humidityResponseBackward(h: Float64Array, dy: Float64Array): Float64Array {
  return h.map((v, i) => dy[i] / (3 * Math.cbrt(v) ** 2));
}
