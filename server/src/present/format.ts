// The one presentation of a result's figures, shared by the CLI (table, details, SARIF, JUnit),
// the language server (diagnostics, lenses, hovers, Testing view) and the VS Code client (report
// page, Testing view): relative errors, values, indices, shapes, times, and which parameter a
// one-line summary names. Pure: no Node, no editor API (own tsconfig).
//
// Index format: `[2, 3]` (comma and space), the form the engine's own messages use (`x[2, 3]`,
// `J[1, 0]`), so a table cell and the message beside it read the same; a scalar's empty index is
// `scalar`.

import type { ParamResult, Verdict } from '../model/types';

/** What stands in a cell with no figure. */
export const NO_FIGURE = '-';

/** A relative error with two significant digits (`5.0e-1`): enough to judge it against a tolerance. */
export function formatRelError(x: number | null | undefined): string {
  if (typeof x !== 'number' || Number.isNaN(x)) return NO_FIGURE;
  if (x === 0) return '0';
  if (!Number.isFinite(x)) return 'inf';
  return x.toExponential(1);
}

/** A value compared by eye (backward vs numeric): six significant digits, plain in [1e-3, 1e6), exponential outside. */
export function formatNumber(x: number | null | undefined): string {
  if (x === null || x === undefined) return NO_FIGURE;
  if (typeof x !== 'number' || Number.isNaN(x)) return 'NaN';
  if (x === 0 || !Number.isFinite(x)) return String(x);
  const abs = Math.abs(x);
  return abs >= 1e-3 && abs < 1e6 ? String(Number(x.toPrecision(6))) : x.toExponential(5);
}

/** A multi-index as `[2, 3]`; a scalar parameter's empty index as `scalar`. */
export function formatIndex(index: readonly number[] | undefined): string {
  return index && index.length > 0 ? `[${index.join(', ')}]` : 'scalar';
}

/** An element of a parameter: `weight[2, 3]`, or the name alone for a scalar. */
export function elementName(param: string, index: readonly number[]): string {
  return index.length === 0 ? param : `${param}${formatIndex(index)}`;
}

/** A parameter's element type and shape: `f64[2, 3]`, or `num` for a scalar. */
export function formatShape(p: Pick<ParamResult, 'dtype' | 'shape'>): string {
  return p.shape.length === 0 ? p.dtype : `${p.dtype}[${p.shape.join(', ')}]`;
}

/** A duration: `<1 ms`, `12 ms`, `1.3 s`. */
export function formatTime(ms: number | null | undefined): string {
  if (typeof ms !== 'number' || !Number.isFinite(ms)) return NO_FIGURE;
  if (ms < 1) return '<1 ms';
  if (ms < 1000) return `${Math.round(ms)} ms`;
  return `${(ms / 1000).toFixed(1)} s`;
}

/** Cuts text to `max` characters with an ellipsis. */
export function shorten(text: string, max: number): string {
  return text.length <= max ? text : `${text.slice(0, max - 1)}…`;
}

/** The first line of a message, cut to fit a lens, a status line or a table. */
export function oneLine(text: string, max = 120): string {
  return shorten((text.split('\n')[0] ?? '').trim(), max);
}

/**
 * A parameter's figure, shown beside its name: its worst element's own relative error (the
 * element the verdict rests on, model/types.ts WorstElement), else its largest relative error.
 */
export function paramRelError(p: ParamResult): number {
  return p.worst?.relError ?? p.maxRelError;
}

/** The figure as a rank: a figure that is not a number (null in JSON) counts as the largest. */
function rankOf(p: ParamResult): number {
  const e = paramRelError(p);
  return typeof e === 'number' && !Number.isNaN(e) ? e : Number.POSITIVE_INFINITY;
}

/**
 * The parameter a one-line summary names: the one the op's verdict rests on. Among the
 * parameters that share the op's verdict (all of them when none does), the one with the largest
 * figure (paramRelError; not a number counts as largest); the first of equals. The one rule of the CLI, the editor, the Testing
 * view, the report page and the regression-test snippet.
 */
export function worstParam(pair: { verdict: Verdict; params: readonly ParamResult[] }): ParamResult | undefined {
  let pool: readonly ParamResult[] = pair.params.filter((p) => p.verdict === pair.verdict);
  if (pool.length === 0) pool = pair.params;
  let worst: ParamResult | undefined;
  for (const p of pool) if (!worst || rankOf(p) > rankOf(worst)) worst = p;
  return worst;
}
