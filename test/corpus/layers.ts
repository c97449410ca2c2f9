// Stateful layer classes of the Quillmere Glasshouse controller (fictional): learnable fields
// on the instance (`this.weight`, `this.alpha`, ...), caches kept between forward and backward
// like a training framework's layers, a construct factory and a subclass. Part of the labelled
// accuracy corpus (labels.json); some backwards are wrong on purpose.

import { dot, logistic } from './util';

/** A vent actuator layer: y_i = tanh(weight_i · x_i + bias). Caches what its backward needs. */
export class VentLayer {
  weight = new Float64Array(6);
  bias = 0;
  private lastInput = new Float64Array(0);
  private lastOutput = new Float64Array(0);

  /**
   * @backward backward
   * @sample x f64[6] in [-2, 2]
   * @sample this.weight f64[6]
   * @sample this.bias num in [-0.5, 0.5]
   */
  forward(x: Float64Array): Float64Array {
    this.lastInput = Float64Array.from(x);
    this.lastOutput = x.map((v, i) => Math.tanh(this.weight[i] * v + this.bias));
    return this.lastOutput;
  }

  backward(dy: Float64Array): { x: Float64Array; weight: Float64Array; bias: number } {
    const dz = dy.map((g, i) => g * (1 - this.lastOutput[i] ** 2));
    let dBias = 0;
    for (const g of dz) dBias += g;
    return {
      x: dz.map((g, i) => g * this.weight[i]),
      weight: dz.map((g, i) => g * this.lastInput[i]),
      bias: dBias,
    };
  }
}

/**
 * Exponential smoothing of air temperature with learnable memory alpha and sensor gain:
 * s_t = alpha · s_{t-1} + (1 - alpha) · gain · x_t, starting from the last known state.
 */
export class ThermalMemory {
  alpha = 0.5;
  gain = 1;
  protected states = new Float64Array(0);
  protected inputs = new Float64Array(0);

  constructor(readonly initial: number) {}

  /**
   * @backward backward
   * @construct makeThermalMemory
   * @sample x f64[12] in [10, 30]
   * @sample this.alpha num in [0.2, 0.8]
   * @sample this.gain num in [0.5, 1.5]
   */
  forward(x: Float64Array): Float64Array {
    this.inputs = Float64Array.from(x);
    this.states = new Float64Array(x.length);
    let s = this.initial;
    for (let t = 0; t < x.length; t++) {
      s = this.alpha * s + (1 - this.alpha) * this.gain * x[t];
      this.states[t] = s;
    }
    return Float64Array.from(this.states);
  }

  /** Backpropagation through time over the cached sequence. */
  backward(dy: Float64Array): { x: Float64Array; alpha: number; gain: number } {
    const n = this.inputs.length;
    const dx = new Float64Array(n);
    let dAlpha = 0;
    let dGain = 0;
    let carried = 0; // dL/ds_t arriving from later steps
    for (let t = n - 1; t >= 0; t--) {
      const ds = dy[t] + carried;
      const prev = t > 0 ? this.states[t - 1] : this.initial;
      dx[t] = ds * (1 - this.alpha) * this.gain;
      dAlpha += ds * (prev - this.gain * this.inputs[t]);
      dGain += ds * (1 - this.alpha) * this.inputs[t];
      carried = ds * this.alpha;
    }
    return { x: dx, alpha: dAlpha, gain: dGain };
  }
}

export function makeThermalMemory(): ThermalMemory {
  return new ThermalMemory(18);
}

/** The same smoothing with a backward that truncates backpropagation through time. */
export class ThermalMemoryTruncated extends ThermalMemory {
  /**
   * @backward backward
   * @construct makeThermalMemoryTruncated
   * @sample x f64[12] in [10, 30]
   * @sample this.alpha num in [0.2, 0.8]
   * @sample this.gain num in [0.5, 1.5]
   */
  override forward(x: Float64Array): Float64Array {
    return super.forward(x);
  }

  override backward(dy: Float64Array): { x: Float64Array; alpha: number; gain: number } {
    const n = this.inputs.length;
    const dx = new Float64Array(n);
    let dAlpha = 0;
    let dGain = 0;
    for (let t = n - 1; t >= 0; t--) {
      // BUG (labelled): ignores the gradient carried back through s_{t-1} (truncated BPTT).
      const ds = dy[t];
      const prev = t > 0 ? this.states[t - 1] : this.initial;
      dx[t] = ds * (1 - this.alpha) * this.gain;
      dAlpha += ds * (prev - this.gain * this.inputs[t]);
      dGain += ds * (1 - this.alpha) * this.inputs[t];
    }
    return { x: dx, alpha: dAlpha, gain: dGain };
  }
}

export function makeThermalMemoryTruncated(): ThermalMemoryTruncated {
  return new ThermalMemoryTruncated(18);
}

/** A canopy gate: y = logistic(weight · x) · x. Its backward takes x explicitly. */
export class CanopyGate {
  weight = new Float64Array(5);

  /**
   * @backward backward(x, $dy)
   * @sample x f64[5] in [-2, 2]
   * @sample this.weight f64[5]
   */
  forward(x: Float64Array): Float64Array {
    const g = logistic(dot(this.weight, x));
    return x.map((v) => g * v);
  }

  backward(x: Float64Array, dy: Float64Array): Float64Array[] {
    const g = logistic(dot(this.weight, x));
    const dz = dot(dy, x) * g * (1 - g);
    return [x.map((_, i) => dy[i] * g + dz * this.weight[i]), x.map((v) => dz * v)];
  }
}

/** A mist nozzle head: y_i = scale · x_i² + bias, scalar learnable scale and bias. */
export class MistNozzle {
  scale = 1;
  bias = 0;
  private lastInput = new Float64Array(0);

  /**
   * @backward backward
   * @sample x f64[8] in [0, 2]
   * @sample this.scale num in [0.5, 2]
   * @sample this.bias num
   */
  forward(x: Float64Array): Float64Array {
    this.lastInput = Float64Array.from(x);
    return x.map((v) => this.scale * v * v + this.bias);
  }

  backward(dy: Float64Array): { x: Float64Array; scale: number; bias: number } {
    const x = this.lastInput;
    let dScale = 0;
    let dBias = 0;
    for (let i = 0; i < x.length; i++) {
      dScale += dy[i] * x[i] * x[i];
      dBias += dy[i];
    }
    // BUG (labelled): the bias gradient is averaged over the nozzles instead of summed.
    return { x: x.map((v, i) => dy[i] * 2 * this.scale * v), scale: dScale, bias: dBias / x.length };
  }
}
