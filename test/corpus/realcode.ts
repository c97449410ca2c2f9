// Ops of the Quillmere Glasshouse controller (fictional) written the way people write
// TypeScript (docs/code-shapes.md): framework-style layers that accumulate gradients, destructured and
// defaulted options, objects of functions, a logging helper that imports Node built-ins, prose
// that mentions `@tags`, and the usual mistakes. Each shape is named in the comment above it.

import { logRun } from './runLog';

export interface SoftOpts {
  sharpness?: number;
  offset?: number;
}

/**
 * Shape: destructured options with default values (not sampled: the defaults apply).
 * Smooth vent opening; tune it with `sharpness`. Note for @maintainers: keep this pure.
 * @backward ventOpeningBackward
 * @sample x f64[6] in [-2, 2]
 */
export function ventOpening(x: Float64Array, { sharpness = 2, offset = 0.25 }: SoftOpts = {}): Float64Array {
  return x.map((v) => Math.log1p(Math.exp(sharpness * (v - offset))) / sharpness);
}

export function ventOpeningBackward(x: Float64Array, { sharpness = 2, offset = 0.25 }: SoftOpts = {}, dy: Float64Array): Float64Array {
  return x.map((v, i) => dy[i] / (1 + Math.exp(-sharpness * (v - offset))));
}

/**
 * Shape: a plain parameter with a default value, not sampled; and a logging helper from a
 * module that imports `node:fs` and `node:path`, called only when `verbose` is set.
 * @backward heatGainBackward
 * @sample q f64[5] in [0, 3]
 */
export function heatGain(q: Float64Array, gain = 1.75, verbose = false): Float64Array {
  if (verbose) logRun('heatGain', q.length);
  return q.map((v) => gain * v * v);
}

export function heatGainBackward(q: Float64Array, gain = 1.75, _verbose = false, dy: Float64Array): Float64Array {
  return q.map((v, i) => 2 * gain * v * dy[i]);
}

/** Shape: an object of functions (methods of an object literal), each op's backward beside it. */
export const blinds = {
  /**
   * @backward shadeBackward
   * @sample x f64[4] in [0, 1]
   */
  shade(x: Float64Array): Float64Array {
    return x.map((v) => v * v * (3 - 2 * v));
  },
  shadeBackward(x: Float64Array, dy: Float64Array): Float64Array {
    return x.map((v, i) => 6 * v * (1 - v) * dy[i]);
  },
  /**
   * @backward tiltBackward
   * @sample x f64[4] in [0, 1]
   */
  tilt(x: Float64Array): Float64Array {
    return x.map((v) => Math.sin(1.5 * v));
  },
  tiltBackward(x: Float64Array, dy: Float64Array): Float64Array {
    // BUG (labelled): the chain-rule factor 1.5 of the inner function is missing.
    return x.map((v, i) => Math.cos(1.5 * v) * dy[i]);
  },
};

const ROWS = 3;
const COLS = 4;

/** Shape: a framework-style dense layer whose backward accumulates `this.gradW[k] += ...`. */
export class MistDense {
  weight = new Float64Array(ROWS * COLS);
  gradW = new Float64Array(ROWS * COLS);
  private input = new Float64Array(COLS);

  /**
   * @backward backward
   * @sample x f64[4]
   * @sample this.weight f64[12] in [-0.5, 0.5]
   */
  forward(x: Float64Array): Float64Array {
    this.input = Float64Array.from(x);
    const y = new Float64Array(ROWS);
    for (let i = 0; i < ROWS; i++) for (let j = 0; j < COLS; j++) y[i] += this.weight[i * COLS + j] * x[j];
    return y;
  }

  backward(dy: Float64Array): { x: Float64Array; weight: Float64Array } {
    const dx = new Float64Array(COLS);
    for (let i = 0; i < ROWS; i++) {
      for (let j = 0; j < COLS; j++) {
        this.gradW[i * COLS + j] += dy[i] * this.input[j]; // the training loop zeroes gradW
        dx[j] += this.weight[i * COLS + j] * dy[i];
      }
    }
    return { x: dx, weight: this.gradW };
  }
}

/** Shape: a layer that caches its input only on the first call and reads that cache later. */
export class DripGate {
  scale = new Float64Array(COLS);
  private cached: Float64Array | null = null;

  /**
   * @backward backward
   * @construct makeWarmDripGate
   * @sample x f64[4] in [0.5, 2]
   */
  forward(x: Float64Array): Float64Array {
    // BUG (labelled): the cache is not refreshed, so the backward reads an earlier call's input.
    if (this.cached === null) this.cached = Float64Array.from(x);
    return x.map((v, j) => this.scale[j] * v * v);
  }

  backward(dy: Float64Array): Float64Array {
    const x = this.cached as Float64Array;
    return x.map((v, j) => 2 * this.scale[j] * v * dy[j]);
  }
}

/** A gate that has already served a step at another input, as in a training loop. */
export function makeWarmDripGate(): DripGate {
  const gate = new DripGate();
  gate.scale.fill(1.5);
  gate.forward(new Float64Array(COLS).fill(-3));
  return gate;
}

/**
 * Shape: nested `number[][]` in the everyday map/reduce style.
 * @backward rowEnergyBackward
 * @sample m num[6, 5]
 */
export function rowEnergy(m: number[][]): number[] {
  return m.map((row) => row.reduce((acc, v) => acc + v * v, 0));
}

export function rowEnergyBackward(m: number[][], dy: number[]): number[][] {
  return m.map((row, r) => row.map((v) => 2 * v * dy[r]));
}

/**
 * Shape: the backward declares the forward's parameters in another order (w, x vs x, w);
 * without a list in the tag it is called as its parameter names say.
 * @backward trayWeightBackward
 * @sample w f64[3]
 * @sample x f64[3]
 */
export function trayWeight(w: Float64Array, x: Float64Array): Float64Array {
  return x.map((v, i) => v * w[i]);
}

export function trayWeightBackward(x: Float64Array, w: Float64Array, dy: Float64Array): Float64Array[] {
  return [dy.map((g, i) => g * x[i]), dy.map((g, i) => g * w[i])];
}

/**
 * Shape: a backward that scales its upstream gradient in place and returns it.
 * @backward doubleFeedBackward
 * @sample x f64[5]
 */
export function doubleFeed(x: Float64Array): Float64Array {
  return x.map((v) => 2 * v);
}

export function doubleFeedBackward(_x: Float64Array, dy: Float64Array): Float64Array {
  for (let i = 0; i < dy.length; i++) dy[i] *= 2;
  return dy;
}

/** Shape: a layer with a `#private` weight, sampled as `this.#w`: refused at the tag. */
export class SealedNozzle {
  #w = new Float64Array(3);

  /**
   * @backward backward
   * @sample x f64[3]
   * @sample this.#w f64[3]
   */
  forward(x: Float64Array): Float64Array {
    return x.map((v, i) => this.#w[i] * v);
  }

  backward(dy: Float64Array): Float64Array {
    return dy.map((g, i) => g * this.#w[i]);
  }
}

/**
 * Shape: the op's block written on the class instead of on its forward method.
 * @backward backward
 * @sample x f64[3]
 */
export class MisplacedLamp {
  forward(x: Float64Array): Float64Array {
    return x.map((v) => v * v);
  }

  backward(dy: Float64Array): Float64Array {
    return dy;
  }
}

/** Shape: a layer keeping its accumulator and cache in `#private` fields. */
export class SealedMistDense {
  weight = new Float64Array(ROWS * COLS);
  #gradW = new Float64Array(ROWS * COLS);
  #input = new Float64Array(COLS);

  /**
   * @backward backward
   * @sample x f64[4]
   * @sample this.weight f64[12] in [-0.5, 0.5]
   */
  forward(x: Float64Array): Float64Array {
    this.#input = Float64Array.from(x);
    const y = new Float64Array(ROWS);
    for (let i = 0; i < ROWS; i++) for (let j = 0; j < COLS; j++) y[i] += this.weight[i * COLS + j] * x[j];
    return y;
  }

  backward(dy: Float64Array): { x: Float64Array; weight: Float64Array } {
    const dx = new Float64Array(COLS);
    for (let i = 0; i < ROWS; i++) {
      for (let j = 0; j < COLS; j++) {
        this.#gradW[i * COLS + j] += dy[i] * this.#input[j];
        dx[j] += this.weight[i * COLS + j] * dy[i];
      }
    }
    return { x: dx, weight: this.#gradW };
  }
}
