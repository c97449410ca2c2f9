// The engine copies whole float arrays between its own storage and the op's with the built-in
// %TypedArray%.prototype.set: the values must be exactly those an element-by-element copy gives
// (float32 rounding as Math.fround, IEEE 754 round to nearest), and a typed array's element count
// is its own, whatever `length` property it was given.

import assert from 'node:assert/strict';
import { buildValue, detectLayout, flattenInto } from '../../server/src/engine/outputLayout';
import { check, functionOp, show, spec } from './opBuilder';

describe('engine: whole-array float copies', () => {
  const flat = Float64Array.from({ length: 37 }, (_, i) => Math.sin(i + 0.1) * 10 ** ((i % 9) - 4));

  it('a float32 output built from a float64 vector holds Math.fround of every element', () => {
    const layout = detectLayout(new Float32Array(37));
    const out = buildValue(layout, flat) as Float32Array;
    assert.ok(out instanceof Float32Array);
    for (let i = 0; i < flat.length; i++) assert.equal(out[i], Math.fround(flat[i]));
    const back = new Float64Array(37);
    flattenInto(out, layout, back);
    for (let i = 0; i < flat.length; i++) assert.equal(back[i], Math.fround(flat[i]));
  });

  it('the parts of an object output land at their offsets', () => {
    const value = { a: Float64Array.from([1, 2, 3]), b: Float32Array.from([0.1, 0.2]), c: 7 };
    const layout = detectLayout(value);
    const dest = new Float64Array(layout.size);
    flattenInto(value, layout, dest);
    assert.deepEqual([...dest], [1, 2, 3, Math.fround(0.1), Math.fround(0.2), 7]);
    const rebuilt = buildValue(layout, dest) as { a: Float64Array; b: Float32Array; c: number };
    assert.deepEqual([...rebuilt.a], [1, 2, 3]);
    assert.deepEqual([...rebuilt.b], [Math.fround(0.1), Math.fround(0.2)]);
    assert.equal(rebuilt.c, 7);
  });

  it('an output of another length than its layout is a changed shape, not a partial copy', () => {
    const layout = detectLayout(new Float64Array(4));
    assert.throws(() => flattenInto(new Float64Array(5), layout, new Float64Array(5)), /changed shape/);
    assert.throws(() => flattenInto(new Float32Array(4), layout, new Float64Array(4)), /changed shape/);
  });

  it('a forward output and a gradient given a false `length` are read by their own element count', () => {
    const lying = (a: Float64Array): Float64Array => {
      Object.defineProperty(a, 'length', { value: 3 });
      return a;
    };
    const o = check(
      functionOp({
        forward: (x: Float64Array) => lying(x.map((v) => v * v * v)),
        backward: (x: Float64Array, dy: Float64Array) => x.map((v, i) => 3 * v * v * dy[i]),
        params: [['x', spec('f64', [8])]],
      }),
      { stepScans: 'none' },
    );
    assert.equal(o.verdict, 'pass', show(o));
    assert.equal(o.params[0].checkedElements, 8);
  });
});
