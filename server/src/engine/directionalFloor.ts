// The detection floor of a directional check (@tangent's J·t, @hessian's H·v): the smallest
// relative error in one entry of J (or H) that the check catches with probability at least 0.99
// over its own random directions, for an entry of root-mean-square size in its row.
//
// Derivation (ours; docs/derivatives.md, "What a pass proves"). Row i of the matrix, entries
// scaled as the directions are: c_k = J_ik·max(1, |x_k|) over the n elements of the parameter
// moved (directionLine: v_k = d_k·max(1, |x_k|), d_k uniform in [−1, 1), drawn afresh for every
// direction). With one entry wrong by e = ε·c_j, the function returns a = (J v)_i + e·d_j and the
// check compares it with n ≈ (J v)_i = c_j·d_j + y', where y' = Σ_{k≠j} c_k·d_k does not depend
// on d_j. The output is flagged when |a − n| > tol·max(|a|, |n|) (plus the estimate's own error
// and the zero level, left out here: the floor holds as far as the error estimates hold, for
// outputs above the zero level). Let R² = Σ_k c_k² / n and |c_j| = R. Since |a| ≤ |n| + |e·d_j|
// and |n| ≤ R·|d_j| + |y'|, a direction with |d_j| ≥ δ and |y'| ≤ t catches the entry when
//     ε > tol·(1 + t / (R·δ)) / (1 − tol).
// A direction misses with probability at most δ + P(|y'| > t); the P directions are drawn
// independently, so all miss with probability at most q^P when each misses with at most q:
// q = 0.01^(1/P). Two bounds on y' give two floors; the smaller holds:
//  (a) always |y'| ≤ Σ_{k≠j} |c_k| ≤ √(n−1)·√(Σ_{k≠j} c_k²) = (n − 1)·R (Cauchy–Schwarz); with
//      δ = q: ε_a = tol·(1 + (n − 1)/q) / (1 − tol);
//  (b) Hoeffding's inequality for the independent terms c_k·d_k ∈ [−|c_k|, |c_k|] (W. Hoeffding,
//      "Probability inequalities for sums of bounded random variables", JASA 58, 1963, Theorem 2):
//      P(|y'| ≥ t) ≤ 2·exp(−t² / (2·(n − 1)·R²)); with δ = q/2 and that probability q/2,
//      t = R·√(2·(n − 1)·ln(4/q)) and ε_b = tol·(1 + 2·√(2·(n − 1)·ln(4/q)) / q) / (1 − tol).
// For n = 1 the floor is the tolerance (the entry is the whole output). With the default two
// directions (q = 0.1): n = 2 gives 11·tol, n = 10 gives 91·tol, n = 100 gives about 542·tol.
// An entry smaller than its row's root mean square has a floor larger by R / |c_j|.

import { log, min, pow, sqrt } from './builtins';

/** Probability with which a single wrong entry above the floor is caught (as for every floor). */
export const FLOOR_CATCH_PROBABILITY = 0.99;

/**
 * The floor for a parameter of n elements checked along `directions` random directions with
 * relative tolerance tol (see the derivation above). Infinity when no direction was compared.
 */
export function directionalFloor(n: number, directions: number, tol: number): number {
  if (directions < 1 || n < 1 || !(tol < 1)) return Infinity;
  const q = pow(1 - FLOOR_CATCH_PROBABILITY, 1 / directions);
  const others = n - 1;
  const worstCase = 1 + others / q;
  const hoeffding = 1 + (2 * sqrt(2 * others * log(4 / q))) / q;
  return (tol * min(worstCase, hoeffding)) / (1 - tol);
}
