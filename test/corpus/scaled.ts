// Badly scaled ops of the Quillmere Glasshouse controller (fictional): photon counts near 1e30,
// gradients near 1e-12, a steep exponential, small concentrations and a loss on a large
// baseline. Correct ones must pass; a fixed-step, fixed-tolerance checker trips on most of them.
// Part of the labelled accuracy corpus (labels.json); two backwards are wrong on purpose.

/**
 * Photon noise scale: square root of the photon count per lamp over a day (~1e29 to 1e30).
 * @backward photonNoiseBackward
 * @sample photons f64[8] in [1e29, 1e30]
 */
export function photonNoise(photons: Float64Array): Float64Array {
  return photons.map((p) => Math.sqrt(p));
}

export function photonNoiseBackward(photons: Float64Array, dy: Float64Array): Float64Array {
  return photons.map((p, i) => (dy[i] * 0.5) / Math.sqrt(p));
}

/**
 * Photon noise scale of the backup lamps (same maths).
 * @backward backupPhotonNoiseBackward
 * @sample photons f64[8] in [1e29, 1e30]
 */
export function backupPhotonNoise(photons: Float64Array): Float64Array {
  return photonNoise(photons);
}

export function backupPhotonNoiseBackward(photons: Float64Array, dy: Float64Array): Float64Array {
  // BUG (labelled): 0.4999 typed for 0.5: 2e-4 relative, on gradients near 1e-15.
  return photons.map((p, i) => (dy[i] * 0.4999) / Math.sqrt(p));
}

/**
 * Lamp photon budget: cube of the emitter drive (1e9 to 1e10), values up to 1e30.
 * @backward lampBudgetBackward
 * @sample drive f64[6] in [1e9, 1e10]
 */
export function lampBudget(drive: Float64Array): Float64Array {
  return drive.map((d) => d * d * d);
}

export function lampBudgetBackward(drive: Float64Array, dy: Float64Array): Float64Array {
  return drive.map((d, i) => dy[i] * 3 * d * d);
}

/**
 * Glazing leak loss: 1e-12 × Σ (x³ + x); gradients near 1e-12.
 * @backward glazingLeakGrad(x)
 * @sample x f64[10]
 */
export function glazingLeak(x: Float64Array): number {
  let s = 0;
  for (const v of x) s += v * v * v + v;
  return 1e-12 * s;
}

export function glazingLeakGrad(x: Float64Array): Float64Array {
  return x.map((v) => 1e-12 * (3 * v * v + 1));
}

/**
 * Door seal leak loss: 1e-12 × Σ (x³ + x), same maths as the glazing leak.
 * @backward doorSealLeakGrad(x)
 * @sample x f64[10]
 */
export function doorSealLeak(x: Float64Array): number {
  return glazingLeak(x);
}

export function doorSealLeakGrad(x: Float64Array): Float64Array {
  // BUG (labelled): sign of the linear term flipped; every gradient is still near 1e-12.
  return x.map((v) => 1e-12 * (3 * v * v - 1));
}

/**
 * Frost alarm: a steep exponential exp(1000 · margin) for margins within ±0.01 °C.
 * @backward frostAlarmBackward
 * @sample margin f64[8] in [-0.01, 0.01]
 */
export function frostAlarm(margin: Float64Array): Float64Array {
  return margin.map((m) => Math.exp(1000 * m));
}

export function frostAlarmBackward(margin: Float64Array, dy: Float64Array): Float64Array {
  return margin.map((m, i) => dy[i] * 1000 * Math.exp(1000 * m));
}

/**
 * Dosing level on a log scale: natural log of small CO₂ dosing fractions (1e-3 to 1e-2).
 * @backward dosingLevelBackward
 * @sample fraction f64[8] in [1e-3, 1e-2]
 */
export function dosingLevel(fraction: Float64Array): Float64Array {
  return fraction.map((c) => Math.log(c));
}

export function dosingLevelBackward(fraction: Float64Array, dy: Float64Array): Float64Array {
  return fraction.map((c, i) => dy[i] / c);
}

/**
 * Season energy ledger (kWh): a fixed baseline of 1e7 plus a quadratic in the daily trims.
 * @backward energyLedgerGrad(trim)
 * @sample trim f64[6] in [1, 3]
 */
export function energyLedger(trim: Float64Array): number {
  let s = 1e7;
  for (const t of trim) s += 0.5 * t * t;
  return s;
}

export function energyLedgerGrad(trim: Float64Array): Float64Array {
  return Float64Array.from(trim);
}
