// `@backward library-gradient` in the engine, in process, with @tensorflow/tfjs 4.22 (npm
// registry, CPU backend) as the user's library. Oracle: for each op, tfjs's own automatic
// gradient of the same function written WITHOUT the custom gradient. A custom gradient that
// agrees with that oracle must pass; one that does not (a factor, a wrong branch) must be a
// mismatch located at an element where the oracle disagrees. tfjs computes in float32, so the
// oracle comparison uses a float32-sized tolerance (1e-4 relative, common practice for float32
// gradients of smooth functions of O(1) inputs).

import assert from 'node:assert/strict';
import { TENSOR_LIBRARY_BINDING, type CheckOutcome, type OpDescriptor, type SampleSpec } from '../../server/src/model/types';
import { check, show, spec } from './opBuilder';

// eslint-disable-next-line @typescript-eslint/no-require-imports
const tf = require('@tensorflow/tfjs') as typeof import('@tensorflow/tfjs');

type Tensor = import('@tensorflow/tfjs').Tensor;

/** Relative disagreement above which the oracle counts an element as different (float32, see header). */
const ORACLE_REL_TOL = 1e-4;

/** An op whose forward takes tensors and whose backward is the library's gradient (what discovery builds). */
function libraryOp(forward: (...xs: Tensor[]) => Tensor, params: [string, SampleSpec][]): { exposed: Record<string, unknown>; op: OpDescriptor } {
  const op: OpDescriptor = {
    file: '/virtual/tensorOps.ts',
    line: 1,
    column: 1,
    endLine: 1,
    endColumn: 10,
    forward: 'op',
    backward: 'library-gradient',
    target: { kind: 'function', forwardName: 'op', backwardName: '', backwardIsMethod: false, libraryGradient: true, tensorLibrary: '@tensorflow/tfjs' },
    params: params.map(([name, s]) => ({ name, isField: false, sample: s, tensor: true })),
    backwardArgs: [...params.map(([name]) => ({ kind: 'param' as const, name })), { kind: 'upstream' }],
    fixed: [],
    tags: [],
    problems: [],
  };
  return { exposed: { op: forward, [TENSOR_LIBRARY_BINDING]: tf }, op };
}

/** Seeded inputs in [-2, 2] (mulberry32, as the sandbox's Math.random). */
function seeded(n: number, seed: number): Float32Array {
  let s = seed >>> 0;
  const out = new Float32Array(n);
  for (let i = 0; i < n; i++) {
    s = (s + 0x6d2b79f5) | 0;
    let t = Math.imul(s ^ (s >>> 15), 1 | s);
    t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t;
    out[i] = 4 * (((t ^ (t >>> 14)) >>> 0) / 4294967296) - 2;
  }
  return out;
}

/** Elements where tfjs's gradient of `custom` differs from its autodiff of `plain` (same x, same dy). */
function oracleDisagreements(custom: (x: Tensor) => Tensor, plain: (x: Tensor) => Tensor, shape: number[]): number[] {
  return tf.tidy(() => {
    const n = shape.reduce((a, b) => a * b, 1);
    const x = tf.tensor(seeded(n, 7), shape);
    const dy = tf.tensor(seeded(n, 11), shape);
    const a = tf.grad(custom)(x, dy).dataSync();
    const b = tf.grad(plain)(x, dy).dataSync();
    const out: number[] = [];
    for (let i = 0; i < n; i++) if (Math.abs(a[i]! - b[i]!) > ORACLE_REL_TOL * Math.max(1e-3, Math.abs(b[i]!))) out.push(i);
    return out;
  });
}

interface Case {
  name: string;
  shape: number[];
  /** The function written plainly: tfjs differentiates it itself (the oracle). */
  plain: (x: Tensor) => Tensor;
  /** The same function with a hand-written gradient. */
  custom: (x: Tensor) => Tensor;
}

const softplusPlain = (x: Tensor): Tensor => tf.log1p(tf.exp(x));
const tanhPlain = (x: Tensor): Tensor => tf.tanh(x);
const swishPlain = (x: Tensor): Tensor => tf.mul(x, tf.sigmoid(x));

function withGrad(value: (x: Tensor) => Tensor, grad: (x: Tensor, dy: Tensor) => Tensor): (x: Tensor) => Tensor {
  return tf.customGrad(((x: Tensor, save: (ts: Tensor[]) => void) => {
    save([x]);
    return { value: value(x), gradFunc: (dy: Tensor, saved: Tensor[]) => grad(saved[0]!, dy) };
  }) as never) as unknown as (x: Tensor) => Tensor;
}

const CORRECT: Case[] = [
  // softplus' = sigmoid (handbook identity d/dx log(1+e^x) = 1/(1+e^-x)).
  { name: 'softplus', shape: [6], plain: softplusPlain, custom: withGrad(softplusPlain, (x, dy) => tf.mul(dy, tf.sigmoid(x))) },
  // tanh' = 1 − tanh² (handbook identity).
  { name: 'tanh (2×3)', shape: [2, 3], plain: tanhPlain, custom: withGrad(tanhPlain, (x, dy) => tf.mul(dy, tf.sub(1, tf.square(tf.tanh(x))))) },
  // (x·σ(x))' = σ(x) + x·σ(x)(1 − σ(x)) (product rule).
  {
    name: 'swish',
    shape: [5],
    plain: swishPlain,
    custom: withGrad(swishPlain, (x, dy) => {
      const s = tf.sigmoid(x);
      return tf.mul(dy, tf.add(s, tf.mul(x, tf.mul(s, tf.sub(1, s)))));
    }),
  },
];

const BUGGY: Case[] = [
  // DEMO-style bug: a factor 2 on every element.
  { name: 'tanh, gradient off by a factor 2', shape: [4], plain: tanhPlain, custom: withGrad(tanhPlain, (x, dy) => tf.mul(2, tf.mul(dy, tf.sub(1, tf.square(tf.tanh(x)))))) },
  // A wrong branch: for x > 0.5 the σ(x)(1 − σ(x)) term is missing from swish'.
  {
    name: 'swish, one term missing above 0.5',
    shape: [8],
    plain: swishPlain,
    custom: withGrad(swishPlain, (x, dy) => {
      const s = tf.sigmoid(x);
      const full = tf.add(s, tf.mul(x, tf.mul(s, tf.sub(1, s))));
      return tf.mul(dy, tf.where(tf.greater(x, 0.5), s, full));
    }),
  },
];

function run(c: Case): CheckOutcome {
  return check(libraryOp(c.custom, [['x', spec('f32', c.shape, [-2, 2])]]));
}

describe('engine: tf.customGrad checked through the library gradient (oracle: tfjs autodiff without the custom gradient)', function () {
  this.timeout(120_000);
  before(async () => {
    await tf.setBackend('cpu');
  });

  for (const c of CORRECT) {
    it(`${c.name}: the oracle agrees, and the check passes with float32 tolerances`, () => {
      assert.deepEqual(oracleDisagreements(c.custom, c.plain, c.shape), [], 'oracle: custom and automatic gradients must agree');
      const o = run(c);
      assert.equal(o.verdict, 'pass', show(o));
      assert.equal(o.gradientSource, 'library');
      assert.equal(o.params[0]!.dtype, 'f32');
    });
  }

  for (const c of BUGGY) {
    it(`${c.name}: the oracle disagrees, and the check is a mismatch at an element it names`, () => {
      const wrong = oracleDisagreements(c.custom, c.plain, c.shape);
      assert.ok(wrong.length > 0, 'oracle: the seeded bug must show');
      const o = run(c);
      assert.equal(o.verdict, 'mismatch', show(o));
      const worst = o.params[0]!.worst!;
      assert.ok(worst, show(o));
      // The located element is one where the custom gradient really is wrong: at the check's own
      // sample, its analytic value differs from tfjs's automatic gradient there.
      const flat = worst.index.reduce((acc, v, d) => acc * c.shape[d]! + v, 0);
      const sample = (o.inputs?.args[0] as { data: number[] } | undefined)?.data;
      assert.ok(sample, 'the outcome carries the sample');
      // Elementwise ops: with dy = e_i both gradients are f'(x_i) at element i alone.
      const [customAt, autodiffAt] = tf.tidy(() => {
        const x = tf.tensor(sample, c.shape);
        const oneHot = new Float32Array(sample.length);
        oneHot[flat] = 1;
        const dy = tf.tensor(oneHot, c.shape);
        return [tf.grad(c.custom)(x, dy).dataSync()[flat]!, tf.grad(c.plain)(x, dy).dataSync()[flat]!];
      });
      assert.match(o.message, /gradient of 'x' disagrees at x\[/, show(o));
      assert.ok(
        Math.abs(customAt - autodiffAt) > ORACLE_REL_TOL * Math.max(1e-3, Math.abs(autodiffAt)),
        `located element ${JSON.stringify(worst)}: custom ${customAt}, autodiff ${autodiffAt}`,
      );
    });
  }

  it('names the factor of a gradient off by 2', () => {
    const o = run(BUGGY[0]!);
    assert.ok(
      o.params[0]!.hints.some((h) => /gradient is 2(\.0*|\.9+|\.00+\d*)?× the numeric one|gradient is 1\.99+× the numeric one/.test(h)),
      show(o),
    );
  });

  it('leaves the library with as many tensors as before the check', () => {
    const before = tf.memory().numTensors;
    const o = run(CORRECT[1]!);
    assert.equal(o.verdict, 'pass', show(o));
    assert.ok(o.calls.forward > 10, 'the check made many calls');
    assert.equal(tf.memory().numTensors, before, 'tensors left behind by the check');
  });

  it('passes tensors to a hand-written backward and reads tensor gradients back, disposing them all', () => {
    const built = libraryOp(
      (a: Tensor, b: Tensor) => tf.mul(a, tf.exp(b)),
      [
        ['a', spec('f32', [3])],
        ['b', spec('f32', [3])],
      ],
    );
    built.op.target.libraryGradient = false;
    built.op.target.backwardName = 'opBackward';
    // d(a·e^b) = e^b da + a·e^b db (product rule).
    built.exposed.opBackward = (a: Tensor, b: Tensor, dy: Tensor): Tensor[] => [tf.mul(dy, tf.exp(b)), tf.mul(dy, tf.mul(a, tf.exp(b)))];
    const before = tf.memory().numTensors;
    const o = check(built);
    assert.equal(o.verdict, 'pass', show(o));
    assert.equal(o.gradientSource, undefined);
    assert.equal(tf.memory().numTensors, before);
  });

  it('takes tensors from a @samples factory: read back, differentiated in their shape, and disposed', () => {
    const make = (c: Case): { exposed: Record<string, unknown>; op: OpDescriptor } => {
      const built = libraryOp(c.custom, [['x', spec('f32', [2, 3])]]);
      delete built.op.params[0]!.sample;
      built.exposed.opSamples = (random: () => number) => [
        tf.tensor(
          Array.from({ length: 6 }, () => 4 * random() - 2),
          [2, 3],
        ),
      ];
      built.op.target.samplesFactory = 'opSamples';
      return built;
    };
    const before = tf.memory().numTensors;
    const good = check(make(CORRECT[1]!));
    assert.equal(good.verdict, 'pass', show(good));
    assert.deepEqual(good.params[0]!.shape, [2, 3]);
    assert.equal(good.params[0]!.dtype, 'f32');
    const bad = check(make(BUGGY[0]!));
    assert.equal(bad.verdict, 'mismatch', show(bad));
    assert.equal(bad.params[0]!.worst!.index.length, 2, "the worst element is named in the tensor's own shape");
    assert.equal(tf.memory().numTensors, before, "the factory's tensors were disposed");
  });

  it('says why a backward that indexes a tensor $dy like an array gets NaN', () => {
    const built = libraryOp((a: Tensor) => tf.mul(a, 2), [['a', spec('f32', [3])]]);
    built.op.target.libraryGradient = false;
    built.op.target.backwardName = 'opBackward';
    built.exposed.opBackward = (_a: Tensor, dy: Float32Array) => Float32Array.from([0, 1, 2], (i) => 2 * dy[i]!);
    const o = check(built);
    assert.equal(o.verdict, 'error');
    assert.match(o.message, /has NaN at index \[0\] \(\$dy and \$y are tensors here, since the forward returned a tensor\)/);
  });

  it('says clearly when a differentiated parameter is not a tensor', () => {
    const built = libraryOp((a: Tensor) => tf.mul(a, 2), [['a', spec('f32', [3])]]);
    built.op.params.push({ name: 'k', isField: false, sample: spec('num') });
    built.op.backwardArgs = [{ kind: 'param', name: 'a' }, { kind: 'param', name: 'k' }, { kind: 'upstream' }];
    built.exposed.op = (a: Tensor, k: number) => tf.mul(a, k);
    const o = check(built);
    assert.equal(o.verdict, 'error');
    assert.match(o.message, /library-gradient differentiates tensor parameters only: 'k'/);
  });
});
