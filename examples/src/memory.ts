// Irradiance memory of the Brackenfold co-op forecaster (fictional): an exponentially smoothed
// trace of recent irradiance, s_t = alpha · s_{t-1} + weight · x_t, with learned alpha and weight.

export class IrradianceMemory {
  alpha = 0.7;
  weight = 1;
  private inputs = new Float64Array(0);
  private states = new Float64Array(0);

  /**
   * Smoothed trace over the day's hours, starting from an empty memory.
   * @backward backward
   * @sample x f64[24] in [0, 1]
   * @sample this.alpha num in [0.3, 0.9]
   * @sample this.weight num in [0.5, 1.5]
   */
  trace(x: Float64Array): Float64Array {
    this.inputs = Float64Array.from(x);
    this.states = new Float64Array(x.length);
    let s = 0;
    for (let t = 0; t < x.length; t++) {
      s = this.alpha * s + this.weight * x[t];
      this.states[t] = s;
    }
    return Float64Array.from(this.states);
  }

  /** Backpropagation through time over the hours cached by the last trace. */
  backward(dy: Float64Array): { x: Float64Array; alpha: number; weight: number } {
    const n = this.inputs.length;
    const dx = new Float64Array(n);
    let dAlpha = 0;
    let dWeight = 0;
    let carried = 0;
    for (let t = n - 1; t >= 0; t--) {
      const ds = dy[t] + carried;
      dx[t] = ds * this.weight;
      dAlpha += ds * (t > 0 ? this.states[t - 1] : 0);
      dWeight += ds * this.inputs[t];
      carried = ds * this.alpha;
    }
    // DEMO BUG: the two field gradients are returned under each other's names.
    return { x: dx, alpha: dWeight, weight: dAlpha };
  }
}
