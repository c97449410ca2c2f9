// The Quillmere Glasshouse's vent controller (a made-up scenario), as a user's own TensorFlow.js
// project would write it: custom gradients with tf.customGrad, and a forward composed of library
// calls, all checked with `@backward library-gradient`. One gradient is wrong on purpose.
import * as tf from '@tensorflow/tfjs';

/**
 * Vent opening limit: tanh of the request, with its gradient written by hand.
 * @backward library-gradient
 * @sample request f32[8] in [-2, 2]
 */
export const ventLimit = tf.customGrad((request, save) => {
  const r = request as tf.Tensor;
  (save as tf.GradSaveFunc)([r]);
  // d/dr tanh(r) = 1 − tanh²(r)
  return { value: tf.tanh(r), gradFunc: (dy: tf.Tensor, saved: tf.Tensor[]) => tf.mul(dy, tf.sub(1, tf.square(tf.tanh(saved[0]!)))) };
});

/**
 * Heat through the glass: σ(W · t) for 3 panes and 4 temperature readings.
 * @backward library-gradient
 * @sample weight f32[3, 4] in [-1, 1]
 * @sample temps f32[4, 1] in [-1, 1]
 */
export function glassHeat(weight: tf.Tensor2D, temps: tf.Tensor2D): tf.Tensor {
  return tf.sigmoid(tf.matMul(weight, temps));
}

/**
 * Misting pump: softplus of the demand.
 * @backward library-gradient
 * @sample demand f32[6] in [-3, 3]
 */
export const mistingPump = tf.customGrad((demand, save) => {
  const d = demand as tf.Tensor;
  (save as tf.GradSaveFunc)([d]);
  // BUG (on purpose, CI expects a mismatch): softplus' is σ(d), not e^d.
  return { value: tf.softplus(d), gradFunc: (dy: tf.Tensor, saved: tf.Tensor[]) => tf.mul(dy, tf.exp(saved[0]!)) };
});
