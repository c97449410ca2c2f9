// Direct access to a benchmark op loaded in a vm context: its parameters as typed arrays of
// that context, one forward call returning the flat output, one backward call returning each
// parameter's gradient. The evaluation floor and the hand-written loop are built on this.
import type { LoadedModule } from './evalContext';
import type { BenchOp } from './opSources';

type Fn = (...args: unknown[]) => unknown;

export interface DirectOp {
  /** Parameter values, in BenchOp.params order; writing into them moves the op's input. */
  params: Float64Array[];
  outputs: number;
  forward(): Float64Array;
  /** Gradients of every parameter for upstream gradient dy, in BenchOp.params order. */
  backward(dy: Float64Array): Float64Array[];
}

/** Sample ranges of each kind's parameters, as in the `@sample` tags of opSources.ts. */
const RANGES: Record<string, [number, number]> = {
  x: [-3, 3],
  weight: [-1, 1],
  z: [-2, 2],
  signal: [-1, 1],
  kernel: [-1, 1],
  'layer:x': [-2, 2],
  'this.gain': [0.5, 1.5],
  'this.shift': [-0.5, 0.5],
};

/** mulberry32: a small seeded generator (public domain, T. Ettinger) for the inputs. */
export function seededRandom(seed: number): () => number {
  let state = seed >>> 0;
  return () => {
    state = (state + 0x6d2b79f5) | 0;
    let t = Math.imul(state ^ (state >>> 15), 1 | state);
    t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t;
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

function fn(exposed: Record<string, unknown>, name: string): Fn {
  const f = exposed[name];
  if (typeof f !== 'function') throw new Error(`the bundle does not expose ${name}`);
  return f as Fn;
}

/** An op of one parameter whose backward also takes the output, computed once at the sample point. */
function withOutputBackward(op: BenchOp, params: Float64Array[], f: Fn, b: Fn): DirectOp {
  let y: Float64Array | null = null;
  return {
    params,
    outputs: op.outputs,
    forward: () => f(params[0]) as Float64Array,
    backward: (dy) => {
      y ??= f(params[0]) as Float64Array;
      return [b(params[0], y, dy) as Float64Array];
    },
  };
}

export function directOp(op: BenchOp, loaded: LoadedModule, seed: number): DirectOp {
  const random = seededRandom(seed);
  const F64 = loaded.Float64Array;
  const params = op.params.map((p) => {
    const [lo, hi] = RANGES[op.kind === 'layer' && p.name === 'x' ? 'layer:x' : p.name] ?? [-1, 1];
    const a = new F64(p.elements);
    for (let i = 0; i < a.length; i++) a[i] = lo + (hi - lo) * random();
    return a;
  });
  const e = loaded.exposed;
  switch (op.kind) {
    case 'elementwise': {
      const f = fn(e, 'softplus');
      const b = fn(e, 'softplusBackward');
      return { params, outputs: op.outputs, forward: () => f(params[0]) as Float64Array, backward: (dy) => [b(params[0], dy) as Float64Array] };
    }
    case 'matmul': {
      const f = fn(e, 'matVec');
      const b = fn(e, 'matVecBackward');
      return {
        params,
        outputs: op.outputs,
        forward: () => f(params[0], params[1]) as Float64Array,
        backward: (dy) => {
          const g = b(params[0], params[1], dy) as { weight: Float64Array; x: Float64Array };
          return [g.weight, g.x];
        },
      };
    }
    case 'softmax':
      return withOutputBackward(op, params, fn(e, 'rowSoftmax'), fn(e, 'rowSoftmaxBackward'));
    case 'softmaxVector':
      return withOutputBackward(op, params, fn(e, 'softmaxAll'), fn(e, 'softmaxAllBackward'));
    case 'conv1d': {
      const f = fn(e, 'conv1d');
      const b = fn(e, 'conv1dBackward');
      return {
        params,
        outputs: op.outputs,
        forward: () => f(params[0], params[1]) as Float64Array,
        backward: (dy) => {
          const g = b(params[0], params[1], dy) as { signal: Float64Array; kernel: Float64Array };
          return [g.signal, g.kernel];
        },
      };
    }
    case 'layer': {
      const Layer = e.GainLayer as new () => { gain: Float64Array; shift: Float64Array; forward: Fn; backward: Fn };
      if (typeof Layer !== 'function') throw new Error('the bundle does not expose GainLayer');
      const layer = new Layer();
      layer.gain = params[1];
      layer.shift = params[2];
      return {
        params,
        outputs: op.outputs,
        forward: () => layer.forward(params[0]) as Float64Array,
        backward: (dy) => {
          const g = layer.backward(dy) as { x: Float64Array; gain: Float64Array; shift: Float64Array };
          return [g.x, g.gain, g.shift];
        },
      };
    }
  }
}
