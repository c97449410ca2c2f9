// Precision traps of the Quillmere Glasshouse controller (fictional): a float32 parameter
// summed into an ordinary float64 number, a float32 readout that varies over a much smaller
// scale than its input, and a log-sum-exp of large scores with elements far below the largest
// gradient. Part of the labelled accuracy corpus (labels.json), each a correct op and a buggy
// twin. Every label follows from a handbook derivative (Abramowitz & Stegun 4.5.8 for
// d tanh z/dz = 1 − tanh² z; d(x²/2)/dx = x; the gradient of log Σ exp is the softmax).

/**
 * Energy ledger of the heating loops: a base load of 12,000 kWh plus the squared drive of each
 * loop, drives stored as float32, the total kept in a plain (float64) number.
 * @backward heatLedgerF32Backward(drive)
 * @sample drive f32[24] in [-3, 3]
 */
export function heatLedgerF32(drive: Float32Array): number {
  let total = 12_000;
  for (let i = 0; i < drive.length; i++) total += 0.5 * drive[i] * drive[i];
  return total;
}

export function heatLedgerF32Backward(drive: Float32Array): Float32Array {
  const g = new Float32Array(drive.length);
  for (let i = 0; i < drive.length; i++) g[i] = drive[i];
  return g;
}

/**
 * The same ledger for the cold frames.
 * @backward coldLedgerF32Backward(drive)
 * @sample drive f32[24] in [-3, 3]
 */
export function coldLedgerF32(drive: Float32Array): number {
  return heatLedgerF32(drive);
}

export function coldLedgerF32Backward(drive: Float32Array): Float32Array {
  const g = new Float32Array(drive.length);
  // BUG (labelled): a calibration factor 1.004 left in the backward: 0.4 % relative.
  for (let i = 0; i < drive.length; i++) g[i] = 1.004 * drive[i];
  return g;
}

/**
 * Opening of the rotating shade: tanh((angle − 2000) / 20) of a float32 motor angle near 2,000,
 * read out in float32. The function changes over about 20 units, a hundredth of |angle|.
 * @backward shadePhaseF32Backward
 * @sample angle f32[16] in [1990, 2010]
 */
export function shadePhaseF32(angle: Float32Array): Float32Array {
  const y = new Float32Array(angle.length);
  for (let i = 0; i < angle.length; i++) y[i] = Math.tanh((angle[i] - 2000) / 20);
  return y;
}

export function shadePhaseF32Backward(angle: Float32Array, dy: Float32Array): Float32Array {
  const g = new Float32Array(angle.length);
  for (let i = 0; i < angle.length; i++) {
    const t = Math.tanh((angle[i] - 2000) / 20);
    g[i] = (dy[i] * (1 - t * t)) / 20;
  }
  return g;
}

/**
 * The same opening for the north shade.
 * @backward northShadeF32Backward
 * @sample angle f32[16] in [1990, 2010]
 */
export function northShadeF32(angle: Float32Array): Float32Array {
  return shadePhaseF32(angle);
}

export function northShadeF32Backward(angle: Float32Array, dy: Float32Array): Float32Array {
  const g = new Float32Array(angle.length);
  // BUG (labelled): the gear ratio 20 typed as 21 in the chain-rule factor (about 5 % off).
  for (let i = 0; i < angle.length; i++) {
    const t = Math.tanh((angle[i] - 2000) / 20);
    g[i] = (dy[i] * (1 - t * t)) / 21;
  }
  return g;
}

/**
 * Soft maximum of the zone alarm scores: log Σ exp(score), scores between 660 and 700, so the
 * lowest zones' weights are about 1e-14 of the highest.
 * @backward alarmSoftMaxBackward(score)
 * @sample score f64[16] in [660, 700]
 */
export function alarmSoftMax(score: Float64Array): number {
  let top = -Infinity;
  for (let i = 0; i < score.length; i++) top = Math.max(top, score[i]);
  let sum = 0;
  for (let i = 0; i < score.length; i++) sum += Math.exp(score[i] - top);
  return top + Math.log(sum);
}

export function alarmSoftMaxBackward(score: Float64Array): Float64Array {
  let top = -Infinity;
  for (let i = 0; i < score.length; i++) top = Math.max(top, score[i]);
  let sum = 0;
  for (let i = 0; i < score.length; i++) sum += Math.exp(score[i] - top);
  const g = new Float64Array(score.length);
  for (let i = 0; i < score.length; i++) g[i] = Math.exp(score[i] - top) / sum;
  return g;
}

/**
 * The same soft maximum for the backup alarm.
 * @backward backupAlarmSoftMaxBackward(score)
 * @sample score f64[16] in [660, 700]
 */
export function backupAlarmSoftMax(score: Float64Array): number {
  return alarmSoftMax(score);
}

export function backupAlarmSoftMaxBackward(score: Float64Array): Float64Array {
  let top = -Infinity;
  for (let i = 0; i < score.length; i++) top = Math.max(top, score[i]);
  // BUG (labelled): the normaliser starts at 1 as well as adding the top score's own term.
  let sum = 1;
  for (let i = 0; i < score.length; i++) sum += Math.exp(score[i] - top);
  const g = new Float64Array(score.length);
  for (let i = 0; i < score.length; i++) g[i] = Math.exp(score[i] - top) / sum;
  return g;
}
