// Small statistics for the benchmark's claims: a one-sided lower confidence bound on a success
// probability from k successes in n trials.

/** ln Γ(x) by the Lanczos approximation (g = 7, 9 terms; Numerical Recipes 3rd ed. §6.1). */
function logGamma(x: number): number {
  const c = [
    0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313, -176.61503916999185, 12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6,
    1.5056327351493116e-7,
  ];
  if (x < 0.5) return Math.log(Math.PI / Math.sin(Math.PI * x)) - logGamma(1 - x);
  const z = x - 1;
  let a = c[0];
  const t = z + 7.5;
  for (let i = 1; i < 9; i++) a += c[i] / (z + i);
  return 0.5 * Math.log(2 * Math.PI) + (z + 0.5) * Math.log(t) - t + Math.log(a);
}

/** P(X ≥ k) for X ~ Binomial(n, p), summed term by term in log space. */
function upperTail(k: number, n: number, p: number): number {
  if (k <= 0) return 1;
  if (p <= 0) return 0;
  if (p >= 1) return 1;
  let sum = 0;
  for (let i = k; i <= n; i++) {
    sum += Math.exp(logGamma(n + 1) - logGamma(i + 1) - logGamma(n - i + 1) + i * Math.log(p) + (n - i) * Math.log1p(-p));
  }
  return Math.min(1, sum);
}

/**
 * One-sided Clopper–Pearson lower bound at confidence 1 − alpha: the smallest p with
 * P(X ≥ k | p) ≥ alpha (Clopper & Pearson, Biometrika 26 (1934) 404–413), by bisection.
 * With k = n it is alpha^(1/n), close to 1 − 3/n for alpha = 0.05: the "rule of three"
 * (common practice).
 */
export function clopperPearsonLower(k: number, n: number, alpha: number): number {
  if (n <= 0 || k <= 0) return 0;
  if (k === n) return Math.pow(alpha, 1 / n);
  let lo = 0;
  let hi = 1;
  for (let it = 0; it < 60; it++) {
    const mid = (lo + hi) / 2;
    if (upperTail(k, n, mid) >= alpha) hi = mid;
    else lo = mid;
  }
  return lo;
}
