// Number, index and time formats shared by the human table, the SARIF messages and JUnit.

/** A relative error with two significant digits: enough to judge its size. */
export function formatRelError(x: number): string {
  if (typeof x !== 'number' || Number.isNaN(x)) return '-';
  if (x === 0) return '0';
  if (!Number.isFinite(x)) return 'inf';
  return x.toExponential(1);
}

/** A gradient value with six significant digits, plain in [1e-3, 1e6), exponential outside. */
export function formatNumber(x: number): string {
  if (typeof x !== 'number' || Number.isNaN(x)) return 'NaN';
  if (x === 0 || !Number.isFinite(x)) return String(x);
  const abs = Math.abs(x);
  return abs >= 1e-3 && abs < 1e6 ? String(Number(x.toPrecision(6))) : x.toExponential(5);
}

/** A multi-index as `[2,5]`; a scalar parameter's empty index as `(scalar)`. */
export function formatIndex(index: readonly number[]): string {
  return index.length === 0 ? '(scalar)' : `[${index.join(',')}]`;
}

/** A duration: `<1 ms`, `12 ms`, `1.3 s`. */
export function formatTime(ms: number): string {
  if (typeof ms !== 'number' || !Number.isFinite(ms)) return '-';
  if (ms < 1) return '<1 ms';
  if (ms < 1000) return `${Math.round(ms)} ms`;
  return `${(ms / 1000).toFixed(1)} s`;
}

/** Cuts text to `max` characters with an ellipsis. */
export function shorten(text: string, max: number): string {
  return text.length <= max ? text : `${text.slice(0, max - 1)}…`;
}

/** Removes terminal escape sequences and control characters (user output must not steer the terminal). */
export function stripControl(text: string): string {
  return text.replace(/\x1b\[[0-9;?]*[ -/]*[@-~]/g, '').replace(/[\x00-\x08\x0b-\x1f\x7f]/g, '');
}
