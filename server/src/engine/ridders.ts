// Ridders' extrapolation of central differences to zero step, with an error estimate
// (Press, Teukolsky, Vetterling & Flannery, Numerical Recipes, 3rd ed., §5.7, routine dfridr),
// run for several projections of the same output at once so every forward call serves all.

import { F64, abs, max } from './builtins';

/** Step shrink factor between tableau columns (Numerical Recipes §5.7: CON = 1.4). */
export const RIDDERS_CON = 1.4;
/** Tableau size (Numerical Recipes §5.7: NTAB = 10). */
export const RIDDERS_NTAB = 10;
/** Stop when the error grows by this factor (Numerical Recipes §5.7: SAFE = 2). */
export const RIDDERS_SAFE = 2;
/**
 * Initial step, unit: fraction of max(1, |x|). Ridders wants a step that is "not small" so
 * roundoff stays far below the differences (Numerical Recipes §5.7); 0.05 with CON = 1.4 and
 * NTAB = 10 spans steps down to 0.05/1.4^9 ≈ 2.4e-3, and is still capped so that it never
 * crosses an avoid point or leaves the sampled range.
 */
export const RIDDERS_INITIAL_STEP = 0.05;
/** How often the initial step is divided by 10 when the forward is not finite at a step. */
const DOMAIN_RETRIES = 3;

export interface RiddersResult {
  /** Extrapolated derivative per projection. */
  value: Float64Array;
  /** Its error estimate (Infinity when no finite difference could be taken). */
  error: Float64Array;
  /** The initial step actually used. */
  initialStep: number;
}

/**
 * `central(h)` returns the central difference of every projection at step h, or null when the
 * forward was not finite there (the step then shrinks).
 */
export function ridders(central: (h: number) => Float64Array | null, h0: number, count: number, settled?: (value: number, error: number, p: number) => boolean): RiddersResult {
  const value = new F64(count);
  const error = new F64(count);
  for (let p = 0; p < count; p++) error[p] = Infinity;
  let start = h0;
  for (let attempt = 0; attempt <= DOMAIN_RETRIES; attempt++, start /= 10) {
    const first = central(start);
    if (first === null) continue;
    // tableau[j][i] per projection, kept as flat arrays: a[p][j * NTAB + i].
    const a: Float64Array[] = [];
    const done: boolean[] = [];
    for (let p = 0; p < count; p++) {
      a[p] = new F64(RIDDERS_NTAB * RIDDERS_NTAB);
      a[p][0] = first[p];
      value[p] = first[p];
      error[p] = Infinity;
      done[p] = false;
    }
    let hh = start;
    let failed = false;
    const con2 = RIDDERS_CON * RIDDERS_CON;
    for (let i = 1; i < RIDDERS_NTAB; i++) {
      hh /= RIDDERS_CON;
      const col = central(hh);
      if (col === null) {
        failed = true;
        break;
      }
      let allDone = true;
      for (let p = 0; p < count; p++) {
        if (done[p]) continue;
        const t = a[p];
        t[i] = col[p];
        let fac = con2;
        for (let j = 1; j <= i; j++) {
          t[j * RIDDERS_NTAB + i] = (t[(j - 1) * RIDDERS_NTAB + i] * fac - t[(j - 1) * RIDDERS_NTAB + i - 1]) / (fac - 1);
          fac *= con2;
          const errt = max(abs(t[j * RIDDERS_NTAB + i] - t[(j - 1) * RIDDERS_NTAB + i]), abs(t[j * RIDDERS_NTAB + i] - t[(j - 1) * RIDDERS_NTAB + i - 1]));
          if (errt <= error[p]) {
            error[p] = errt;
            value[p] = t[j * RIDDERS_NTAB + i];
          }
        }
        // Higher order is worse by a significant factor: quit early (Numerical Recipes §5.7).
        // Also quit once the estimate is as good as the caller needs: more columns cost forward
        // calls and can only lower an error that is already small enough.
        if (abs(t[i * RIDDERS_NTAB + i] - t[(i - 1) * RIDDERS_NTAB + i - 1]) >= RIDDERS_SAFE * error[p]) done[p] = true;
        else if (settled !== undefined && settled(value[p], error[p], p)) done[p] = true;
        else allDone = false;
      }
      if (allDone) break;
    }
    if (!failed || error[0] < Infinity) return { value, error, initialStep: start };
  }
  return { value, error, initialStep: start };
}

/**
 * Ratio between the initial steps tried when Ridders' extrapolation does not settle: the
 * function may change on a scale much smaller than max(1, |x|) (exp(1000·x), say), and
 * Numerical Recipes §5.7 asks for an initial step over which the function changes
 * substantially but not wildly. Our choice: 1/8 per retry.
 */
export const RIDDERS_RETRY_RATIO = 1 / 8;
/** Smallest initial step tried, unit: central steps (below it the tableau is roundoff). */
export const RIDDERS_MIN_INITIAL_CENTRAL_STEPS = 10;

export interface AdaptiveRiddersResult {
  value: Float64Array;
  error: Float64Array;
  /** Initial step of the run that gave each projection's value. */
  initialStep: Float64Array;
}

/**
 * Ridders from h0; while some projection has not `settled`, again from a smaller initial step
 * (× RIDDERS_RETRY_RATIO, down to minStep), keeping per projection the value with the smallest
 * error estimate.
 */
export function riddersAdaptive(
  central: (h: number) => Float64Array | null,
  h0: number,
  minStep: number,
  count: number,
  settled: (value: number, error: number, p: number) => boolean,
): AdaptiveRiddersResult {
  const value = new F64(count);
  const error = new F64(count);
  const initialStep = new F64(count);
  for (let p = 0; p < count; p++) error[p] = Infinity;
  for (let h = h0; ; h *= RIDDERS_RETRY_RATIO) {
    const r = ridders(central, h, count, settled);
    let all = true;
    for (let p = 0; p < count; p++) {
      if (r.error[p] < error[p]) {
        value[p] = r.value[p];
        error[p] = r.error[p];
        initialStep[p] = r.initialStep;
      }
      if (!settled(value[p], error[p], p)) all = false;
    }
    if (all || h * RIDDERS_RETRY_RATIO < minStep) break;
  }
  return { value, error, initialStep };
}
