// The one place that decides tolerances, step sizes and limits. The CLI, the language server
// and the editor all start from DEFAULT_SETTINGS and overlay the project configuration file
// (and, in the editor, user settings where the file is silent).

/** Unit roundoff of IEEE 754-2019 binary32 (float32): 2^-24. */
export const UNIT_ROUNDOFF_F32 = 2 ** -24;
/** Unit roundoff of IEEE 754-2019 binary64 (float64): 2^-53. */
export const UNIT_ROUNDOFF_F64 = 2 ** -53;

/** Everything a check needs to know besides the op itself. Plain JSON. */
export interface CheckSettings {
  /** Seed of the input generator; an op's `@seed` overrides it. */
  seed: number;
  /**
   * Relative tolerance for float64 (and plain number) ops: an element is a mismatch when
   * |analytic - numeric| exceeds tolerance * max(|analytic|, |numeric|) plus the numeric
   * estimate's own error bound. 1e-6 sits far above the ~u^(2/3) ≈ 4e-11 accuracy of a
   * well-scaled central difference in float64 (Nocedal & Wright, 2nd ed., §8.1) and far below
   * the smallest bug the corpus must catch (1e-4 relative).
   */
  toleranceF64: number;
  /**
   * Relative tolerance for float32 ops: u32^(2/3) ≈ 1.5e-5 is the best a central difference
   * can do in float32 (same analysis, u = 2^-24); 1e-3 leaves room for accumulated roundoff
   * in reductions (common practice, not from a handbook).
   */
  toleranceF32: number;
  /**
   * Parameters with more elements than this and no structure that grouping can use get
   * dot-product probes split down to single elements (splitSearch.ts); below it too when one
   * column per element would cost more forward calls than the probes (methodChoice.ts).
   */
  largeParamElements: number;
  /** Random upstream gradients per op (one backward call each). */
  upstreamProbes: number;
  /** Upstream gradients of the dot-product probes, the upstreamProbes ones first (a backward call for each beyond them); the probes take turns with them. */
  dotProductProbes: number;
  /** No longer used: probes split down to single elements replaced the random subset. Kept so older configuration files load. */
  subsetElements: number;
  /** How often a point with a kink is redrawn before the op is called inconclusive. */
  kinkResamples: number;
  /** Wall-clock limit of one op's whole check, in milliseconds. */
  timeLimitMs: number;
  /** Memory limit of the runner process, in MiB. */
  memoryLimitMb: number;
  /** Largest output or input, in elements, that an op may produce. */
  maxElements: number;
  /**
   * Where ops run. 'process' (the default, also when absent): a warm Node runner process with a
   * hardened vm context, at full speed. 'interpreter': the isolated mode, a JavaScript
   * interpreter compiled to WebAssembly (QuickJS) that reaches no Node API, with its own time and
   * memory limits (memory capped at 512 MiB), 35–50× slower on numeric loops
   * (measured, bench/PERFORMANCE.md): for small ops, and the only way ops of an untrusted workspace run.
   */
  isolation?: 'process' | 'interpreter';
  /**
   * Optional (added by the engine): which parameters get the error-against-step scan shown in
   * the editor's report, 26 extra forward calls each, skipped when those calls would take more
   * than 150 ms. Absent (the default): every parameter that does not pass. 'all': those, and of
   * the passing ones the one nearest its tolerance (the language server asks for it when the
   * report page of an op opens). 'mismatch': only parameters that disagree. 'none': no scan.
   * Verdicts never depend on it.
   */
  stepScans?: 'all' | 'mismatch' | 'none';
}

export const DEFAULT_SETTINGS: CheckSettings = {
  seed: 1234,
  toleranceF64: 1e-6,
  toleranceF32: 1e-3,
  largeParamElements: 4096,
  upstreamProbes: 2,
  dotProductProbes: 4,
  subsetElements: 32,
  kinkResamples: 3,
  timeLimitMs: 10_000,
  memoryLimitMb: 1024,
  maxElements: 4_000_000,
};
