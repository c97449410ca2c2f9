// The one presentation of figures (server/src/present/format.ts) that the CLI, the language
// server and the VS Code client share: formats pinned here, and the one rule for the worst
// parameter (model/types.ts WorstElement: the element the verdict rests on).

import assert from 'node:assert/strict';
import type { ParamResult, Verdict } from '../../server/src/model/types';
import { elementName, formatIndex, formatNumber, formatRelError, formatShape, formatTime, oneLine, paramRelError, worstParam } from '../../server/src/present/format';

function param(name: string, verdict: Verdict, maxRelError: number, relError?: number): ParamResult {
  return {
    name,
    verdict,
    maxAbsError: 0,
    maxRelError,
    shape: [4],
    dtype: 'f64',
    method: 'full',
    elements: 4,
    checkedElements: 4,
    hints: [],
    worst: relError === undefined ? null : { index: [1], analytic: 1, numeric: 1, relError },
  };
}

describe('present/format: figures', () => {
  it('writes a relative error with two significant digits, and says when there is none', () => {
    assert.deepEqual([5e-1, 3.14159e-10, 0, Infinity, NaN, null, undefined].map(formatRelError), ['5.0e-1', '3.1e-10', '0', 'inf', '-', '-', '-']);
  });

  it('writes values with six significant digits, plain in [1e-3, 1e6) and exponential outside', () => {
    assert.deepEqual([0.5, -500.9431234, 1234567, 1.5e-4, 0, NaN, -Infinity, null].map(formatNumber), [
      '0.5',
      '-500.943',
      '1.23457e+6',
      '1.50000e-4',
      '0',
      'NaN',
      '-Infinity',
      '-',
    ]);
  });

  it("writes an index as [2, 3] (the engine messages' form) and a scalar's empty index as scalar", () => {
    assert.equal(formatIndex([2, 3]), '[2, 3]');
    assert.equal(formatIndex([]), 'scalar');
    assert.equal(elementName('weight', [2, 3]), 'weight[2, 3]');
    assert.equal(elementName('rate', []), 'rate');
    assert.equal(formatShape({ dtype: 'f32', shape: [2, 3] }), 'f32[2, 3]');
    assert.equal(formatShape({ dtype: 'num', shape: [] }), 'num');
  });

  it('writes times as <1 ms, whole milliseconds, then tenths of seconds', () => {
    assert.deepEqual([0.4, 3.4, 999.4, 1534, Number.NaN].map(formatTime), ['<1 ms', '3 ms', '999 ms', '1.5 s', '-']);
  });

  it('keeps the first line of a message, cut with an ellipsis', () => {
    assert.equal(oneLine('  first line  \nsecond'), 'first line');
    assert.equal(oneLine('abcdefghij', 5), 'abcd…');
  });
});

describe('present/format: the worst parameter', () => {
  it("is among the parameters that share the op's verdict, even when another has a larger error", () => {
    const params = [param('bias', 'inconclusive', 0.9, 0.9), param('weight', 'mismatch', 0.2, 0.2)];
    assert.equal(worstParam({ verdict: 'mismatch', params })?.name, 'weight');
  });

  it("ranks by the worst element's own relative error, the figure shown beside it", () => {
    // maxRelError may count untrusted estimates; the verdict rests on worst.relError.
    const params = [param('a', 'mismatch', 0.9, 0.1), param('b', 'mismatch', 0.5, 0.4)];
    assert.equal(worstParam({ verdict: 'mismatch', params })?.name, 'b');
    assert.equal(paramRelError(params[0]!), 0.1);
  });

  it('takes the largest, not the first (the Testing view used to take the first)', () => {
    const params = [param('a', 'pass', 1e-12, 1e-12), param('b', 'pass', 1e-9, 1e-9)];
    assert.equal(worstParam({ verdict: 'pass', params })?.name, 'b');
  });

  it('counts an error that is not a number as the largest, and falls back to every parameter', () => {
    assert.equal(worstParam({ verdict: 'mismatch', params: [param('a', 'mismatch', 2, 2), param('b', 'mismatch', NaN)] })?.name, 'b');
    assert.equal(worstParam({ verdict: 'error', params: [param('a', 'pass', 1e-9, 1e-9), param('b', 'pass', 1e-7, 1e-7)] })?.name, 'b');
    assert.equal(worstParam({ verdict: 'error', params: [] }), undefined);
  });
});
