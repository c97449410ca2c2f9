// Panel soiling of the Brackenfold co-op forecaster (fictional), written with TensorFlow.js:
// dust on each of the roof's 12 panel rows takes a share of the light, and the volunteer gave
// the curve its own gradient with `tf.customGrad`. `@backward library-gradient` checks that
// gradient through the library's own gradient call, so no adapter is needed.
import * as tf from '@tensorflow/tfjs';

/** How fast dust darkens a panel row: loss = 1 − exp(−SOILING_RATE · dust). Made up. */
export const SOILING_RATE = 0.8;

/**
 * Share of light lost to dust per panel row, with a hand-written gradient.
 * @backward library-gradient
 * @sample dust f32[12] in [0, 3]
 */
export const soilingLoss = tf.customGrad((dust, save) => {
  const d = dust as tf.Tensor;
  (save as tf.GradSaveFunc)([d]);
  const value = tf.sub(1, tf.exp(tf.mul(-SOILING_RATE, d)));
  // d/dd (1 − e^(−r·d)) = r · e^(−r·d)
  // DEMO BUG: the chain rule's factor SOILING_RATE is missing, so the gradient is 1.25× too large.
  const gradFunc = (dy: tf.Tensor, saved: tf.Tensor[]): tf.Tensor => tf.mul(dy, tf.exp(tf.mul(-SOILING_RATE, saved[0]!)));
  return { value, gradFunc };
});
