// Floating-point facts of the two element types the engine differentiates (float64 and
// float32) and the step sizes and error allowances derived from them, each with its source.

import { UNIT_ROUNDOFF_F32, UNIT_ROUNDOFF_F64 } from './settings';
import { abs, cbrt, fround, max, sqrt } from './builtins';

/** How a parameter stores its numbers: every perturbed value is rounded to this precision. */
export type Precision = 'f64' | 'f32';

/** Unit roundoff u of a precision (IEEE 754-2019: binary64 2^-53, binary32 2^-24). */
export function unitRoundoff(p: Precision): number {
  return p === 'f32' ? UNIT_ROUNDOFF_F32 : UNIT_ROUNDOFF_F64;
}

/**
 * Relative central-difference step u^(1/3), unit: fraction of max(1, |x|). Balances the
 * truncation error (∝ h²) against roundoff (∝ u/h) (Nocedal & Wright, Numerical Optimization,
 * 2nd ed., §8.1): ≈ 4.8e-6 in float64, ≈ 3.9e-3 in float32.
 */
export function relativeStep(p: Precision): number {
  return cbrt(unitRoundoff(p));
}

/** Rounds a value to the storage precision (float32 values are stored rounded). */
export function roundTo(p: Precision, v: number): number {
  return p === 'f32' ? fround(v) : v;
}

/** Central-difference step at x: u^(1/3)·max(1, |x|) (Nocedal & Wright §8.1). Absolute units of x. */
export function centralStep(p: Precision, x: number): number {
  return relativeStep(p) * max(1, abs(x));
}

/**
 * Ulps of error assumed per evaluated output value, dimensionless. A function evaluated with a
 * handful of correctly rounded operations is off by a few ulps; 8 covers both evaluations of a
 * central difference with room for short reductions (common practice, not from a handbook).
 * Ops whose outputs carry more roundoff than this are caught by refinement, not here.
 */
export const ROUNDOFF_ULPS = 8;

/**
 * Relative floor, unit: fraction of the largest gradient entry of the parameter (per upstream
 * probe). An element whose gradient is below √u of the largest one is compared against that
 * level instead of against itself: a central difference's absolute error scales with the
 * parameter's largest terms, not with the element (square-root-of-precision rule of thumb for
 * difference quotients, Nocedal & Wright §8.1; the choice of √u is ours).
 */
export function relativeFloorFactor(p: Precision): number {
  return sqrt(unitRoundoff(p));
}

/**
 * Margin kept between a sampled value and an `avoid` point, unit: central steps at that point.
 * Ten steps keep the central difference and the small refinement steps on one side of a kink.
 */
export const AVOID_MARGIN_STEPS = 10;

/** The margin around an avoid point p, absolute units of x (see AVOID_MARGIN_STEPS). */
export function avoidMargin(p: Precision, point: number): number {
  return AVOID_MARGIN_STEPS * centralStep(p, point);
}
