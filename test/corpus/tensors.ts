// TensorFlow.js ops of the Quillmere Glasshouse controller (fictional): `tf.customGrad` consts
// and forwards composed of library calls, checked through the library's own gradient
// (`@backward library-gradient`), and tensor forwards with hand-written tensor backwards. The
// library computes in float32, so every tensor is sampled `f32`. The customGrad functions take
// untyped `(input, save)` as strict TypeScript requires (the library types them as a union). Part of the labelled accuracy
// corpus (labels.json); each wrong gradient carries a `BUG (labelled)` comment.
import * as tf from '@tensorflow/tfjs';

/**
 * Canopy vent limit: tanh, with its gradient written by hand.
 * @backward library-gradient
 * @sample opening f32[3, 4] in [-2, 2]
 */
export const canopyVentLimit = tf.customGrad((opening, save) => {
  const t = opening as tf.Tensor;
  (save as tf.GradSaveFunc)([t]);
  // d/dx tanh(x) = 1 − tanh²(x)
  return { value: tf.tanh(t), gradFunc: (dy: tf.Tensor, [x]: tf.Tensor[]) => tf.mul(dy, tf.sub(1, tf.square(tf.tanh(x!)))) };
});

/**
 * Mister output: softplus, with its gradient (the logistic function) written by hand.
 * @backward library-gradient
 * @sample demand f32[10] in [-4, 4]
 */
export const misterOutput = tf.customGrad((demand, save) => {
  (save as tf.GradSaveFunc)([demand as tf.Tensor]);
  return { value: tf.softplus(demand as tf.Tensor), gradFunc: (dy: tf.Tensor, [x]: tf.Tensor[]) => tf.mul(dy, tf.sigmoid(x!)) };
});

/**
 * Shade blend of two inputs: a · σ(b), gradients of both written by hand.
 * @backward library-gradient
 * @sample cover f32[6] in [-1, 1]
 * @sample light f32[6] in [-2, 2]
 */
export const shadeBlend = tf.customGrad((cover, light, save) => {
  const c = cover as tf.Tensor;
  const l = light as tf.Tensor;
  (save as tf.GradSaveFunc)([c, l]);
  return {
    value: tf.mul(c, tf.sigmoid(l)),
    gradFunc: (dy: tf.Tensor, [a, b]: tf.Tensor[]) => {
      const s = tf.sigmoid(b!);
      return [tf.mul(dy, s), tf.mul(dy, tf.mul(a!, tf.mul(s, tf.sub(1, s))))];
    },
  };
});

/**
 * Glass heat exchange, composed of library calls: σ(W x) with W 4×5; checked against the
 * library's automatic gradient (what a gradient registered for a kernel would be checked with).
 * @backward library-gradient
 * @sample weight f32[4, 5] in [-1, 1]
 * @sample flow f32[5, 1] in [-1, 1]
 */
export function glassHeatExchange(weight: tf.Tensor2D, flow: tf.Tensor2D): tf.Tensor {
  return tf.sigmoid(tf.matMul(weight, flow));
}

/**
 * Lamp dimmer: exp(k) · level, with a hand-written backward on tensors.
 * @backward lampDimmerBackward
 * @sample level f32[8] in [-1, 1]
 * @sample gain f32[8] in [-1, 1]
 */
export function lampDimmer(level: tf.Tensor1D, gain: tf.Tensor1D): tf.Tensor {
  return tf.mul(tf.exp(gain), level);
}

export function lampDimmerBackward(level: tf.Tensor1D, gain: tf.Tensor1D, dy: tf.Tensor): tf.Tensor[] {
  const e = tf.exp(gain);
  return [tf.mul(dy, e), tf.mul(dy, tf.mul(e, level))];
}

/**
 * Roof vent limit: tanh again.
 * @backward library-gradient
 * @sample opening f32[6] in [-2, 2]
 */
export const roofVentLimit = tf.customGrad((opening, save) => {
  const t = opening as tf.Tensor;
  (save as tf.GradSaveFunc)([t]);
  // BUG (labelled): the gradient is doubled (a factor 2 left from a scaled variant).
  return { value: tf.tanh(t), gradFunc: (dy: tf.Tensor, [x]: tf.Tensor[]) => tf.mul(2, tf.mul(dy, tf.sub(1, tf.square(tf.tanh(x!))))) };
});

/**
 * Fogger output: softplus.
 * @backward library-gradient
 * @sample demand f32[10] in [-4, 4]
 */
export const foggerOutput = tf.customGrad((demand, save) => {
  const t = demand as tf.Tensor;
  (save as tf.GradSaveFunc)([t]);
  // BUG (labelled): e^x is the derivative of the exponential, not of softplus.
  return { value: tf.softplus(t), gradFunc: (dy: tf.Tensor, [x]: tf.Tensor[]) => tf.mul(dy, tf.exp(x!)) };
});

/**
 * Blind blend: a · σ(b).
 * @backward library-gradient
 * @sample cover f32[6] in [-1, 1]
 * @sample light f32[6] in [-2, 2]
 */
export const blindBlend = tf.customGrad((cover, light, save) => {
  const c = cover as tf.Tensor;
  const l = light as tf.Tensor;
  (save as tf.GradSaveFunc)([c, l]);
  return {
    value: tf.mul(c, tf.sigmoid(l)),
    gradFunc: (dy: tf.Tensor, [a, b]: tf.Tensor[]) => {
      const s = tf.sigmoid(b!);
      // BUG (labelled): σ'(b) = σ(1 − σ) written as σ(1 + σ).
      return [tf.mul(dy, s), tf.mul(dy, tf.mul(a!, tf.mul(s, tf.add(1, s))))];
    },
  };
});

/**
 * Sun screen: tanh with a slope of 0.99 where 1 belongs.
 * @backward library-gradient
 * @sample opening f32[12] in [-2, 2]
 */
export const sunScreen = tf.customGrad((opening, save) => {
  const t = opening as tf.Tensor;
  (save as tf.GradSaveFunc)([t]);
  // BUG (labelled): a 1 % error in the gradient, ten times the float32 tolerance.
  return { value: tf.tanh(t), gradFunc: (dy: tf.Tensor, [x]: tf.Tensor[]) => tf.mul(0.99, tf.mul(dy, tf.sub(1, tf.square(tf.tanh(x!))))) };
});

/**
 * Heat lamp: exp(k) · level, hand-written tensor backward.
 * @backward heatLampBackward
 * @sample level f32[8] in [-1, 1]
 * @sample gain f32[8] in [-1, 1]
 */
export function heatLamp(level: tf.Tensor1D, gain: tf.Tensor1D): tf.Tensor {
  return tf.mul(tf.exp(gain), level);
}

export function heatLampBackward(_level: tf.Tensor1D, gain: tf.Tensor1D, dy: tf.Tensor): tf.Tensor[] {
  const e = tf.exp(gain);
  // BUG (labelled): the gain's gradient forgets the factor `level` (product rule).
  return [tf.mul(dy, e), tf.mul(dy, e)];
}

/**
 * Mist pump sampled in float64: the library would round it to float32.
 * @backward library-gradient
 * @sample demand f64[4]
 */
export function mistPump(demand: tf.Tensor1D): tf.Tensor {
  return tf.softplus(demand);
}

/**
 * Drip line whose custom gradient has the wrong shape.
 * @backward library-gradient
 * @sample flow f32[4]
 */
export const dripLine = tf.customGrad((flow, save) => {
  const t = flow as tf.Tensor;
  (save as tf.GradSaveFunc)([t]);
  return { value: tf.square(t), gradFunc: (dy: tf.Tensor) => tf.sum(dy) };
});
