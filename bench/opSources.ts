// Source text of the benchmark's ops (elementwise, matrix–vector product, row softmax, 1-D
// convolution, a stateful layer) at a chosen size, optionally with a seeded bug in the backward,
// written as annotated TypeScript files exactly like a user's, so the real discovery, bundler
// and runner check them.

/** The op families the benchmark measures. */
export type OpKind = 'elementwise' | 'matmul' | 'softmax' | 'conv1d' | 'layer' | 'softmaxVector';

/** The families of the op table, the seeded-bug trials and the generated workspace. */
export const OP_KINDS: readonly OpKind[] = ['elementwise', 'matmul', 'softmax', 'conv1d', 'layer'];
/**
 * Families measured in the op table and the seeded-bug trials only (docs/method.md): a softmax over one
 * long vector, whose Jacobian couples every element with every other.
 */
export const DENSE_KINDS: readonly OpKind[] = ['softmaxVector'];

/** Classes per row of the row softmax: a batch of 10-class logits. */
export const SOFTMAX_CLASSES = 10;
/** Taps of the 1-D convolution kernel. */
export const CONV_TAPS = 5;

/**
 * A wrong backward: `count` elements of one parameter's gradient scaled by (1 + relative), at
 * positions drawn when the module loads from the sandbox's seeded Math.random, so every seed
 * puts the bug somewhere else.
 */
export interface SeededBug {
  count: number;
  relative: number;
  /** The parameter whose gradient is wrong (default: the op's bugParam). y = W x takes 'x' too. */
  param?: string;
}

/** One parameter as the benchmark's own loops see it. */
export interface BenchParam {
  /** Parameter name, or `this.FIELD`. */
  name: string;
  elements: number;
  /**
   * Forward pairs the cheapest exact scheme needs for this parameter when its structure is
   * known in advance (colour classes of structurally orthogonal elements, Curtis, Powell & Reid
   * 1974): 1 for a diagonal, the band width for a band, one per column of W for y = Wx.
   */
  optimalColours: number;
}

export interface BenchOp {
  kind: OpKind;
  /** Display name as discovery reports it (`Class.method` for the layer). */
  forward: string;
  /** File name to write (no folder). */
  fileName: string;
  text: string;
  params: BenchParam[];
  /** Differentiated elements over every parameter. */
  elements: number;
  /** Output elements. */
  outputs: number;
  /** Parameter that carries the seeded bug. */
  bugParam: string;
  /** Shape summary for the table, e.g. `W 1000×1000, x 1000`. */
  shape: string;
  /** Whether the forward is a method (the backward reads state the forward cached). */
  isMethod: boolean;
}

/** Sizes of each kind's parameters for about `target` differentiated elements. */
export function benchOp(kind: OpKind, target: number, bug?: SeededBug): BenchOp {
  switch (kind) {
    case 'elementwise':
      return elementwise(Math.max(1, target), bug);
    case 'matmul':
      return matmul(Math.max(1, Math.round((-1 + Math.sqrt(1 + 4 * target)) / 2)), bug);
    case 'softmax':
      return softmax(Math.max(1, Math.round(target / SOFTMAX_CLASSES)), bug);
    case 'conv1d':
      return conv1d(Math.max(1, target - CONV_TAPS), bug);
    case 'layer':
      return layer(Math.max(1, Math.round(target / 3)), bug);
    case 'softmaxVector':
      return softmaxVector(Math.max(2, target), bug);
  }
}

function fmt(n: number): string {
  return n.toLocaleString('en-US');
}

/** Code that draws the bug positions at load time and applies them to a gradient array. */
function bugCode(size: number, bug: SeededBug | undefined): { decl: string; apply: (g: string) => string } {
  if (!bug) return { decl: '', apply: () => '' };
  const decl = [
    `// Seeded bug (benchmark): ${bug.count} element(s) of one gradient scaled by 1 + ${bug.relative}, at`,
    `// positions drawn from the sandbox's seeded Math.random when the module loads.`,
    `const BUG_AT: number[] = [];`,
    `while (BUG_AT.length < ${bug.count}) {`,
    `  const i = Math.floor(Math.random() * ${size});`,
    `  if (!BUG_AT.includes(i)) BUG_AT.push(i);`,
    `}`,
    '',
  ].join('\n');
  return { decl, apply: (g) => `  for (const i of BUG_AT) ${g}[i] *= 1 + ${bug.relative};\n` };
}

function elementwise(n: number, bug?: SeededBug): BenchOp {
  const b = bugCode(n, bug);
  const text = `// Benchmark op: softplus over ${fmt(n)} elements (a diagonal Jacobian).
${b.decl}
/**
 * Softplus, elementwise.
 * @backward softplusBackward
 * @sample x f64[${n}] in [-3, 3]
 */
export function softplus(x: Float64Array): Float64Array {
  const n = x.length;
  const y = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const v = x[i];
    // log(1 + e^v) without overflow: the same function on both branches.
    y[i] = v > 0 ? v + Math.log1p(Math.exp(-v)) : Math.log1p(Math.exp(v));
  }
  return y;
}

export function softplusBackward(x: Float64Array, dy: Float64Array): Float64Array {
  const n = x.length;
  const g = new Float64Array(n);
  for (let i = 0; i < n; i++) g[i] = dy[i] / (1 + Math.exp(-x[i]));
${b.apply('g')}  return g;
}
`;
  return {
    kind: 'elementwise',
    forward: 'softplus',
    fileName: `elementwise_${n}.ts`,
    text,
    params: [{ name: 'x', elements: n, optimalColours: 1 }],
    elements: n,
    outputs: n,
    bugParam: 'x',
    shape: `x ${fmt(n)}`,
    isMethod: false,
  };
}

function matmul(c: number, bug?: SeededBug): BenchOp {
  const r = c;
  const inX = bug?.param === 'x';
  const b = bugCode(inX ? c : r * c, bug);
  const text = `// Benchmark op: y = W x with W ${r}×${c} (W's Jacobian couples each row with one output).
${b.decl}
/**
 * Matrix–vector product, W row-major.
 * @backward matVecBackward
 * @sample weight f64[${r}, ${c}]
 * @sample x f64[${c}]
 */
export function matVec(weight: Float64Array, x: Float64Array): Float64Array {
  const cols = x.length;
  const rows = weight.length / cols;
  const y = new Float64Array(rows);
  for (let i = 0; i < rows; i++) {
    let s = 0;
    const base = i * cols;
    for (let j = 0; j < cols; j++) s += weight[base + j] * x[j];
    y[i] = s;
  }
  return y;
}

export function matVecBackward(weight: Float64Array, x: Float64Array, dy: Float64Array): { weight: Float64Array; x: Float64Array } {
  const cols = x.length;
  const rows = weight.length / cols;
  const dWeight = new Float64Array(weight.length);
  const dx = new Float64Array(cols);
  for (let i = 0; i < rows; i++) {
    const d = dy[i];
    const base = i * cols;
    for (let j = 0; j < cols; j++) {
      dWeight[base + j] = d * x[j];
      dx[j] += weight[base + j] * d;
    }
  }
${b.apply(inX ? 'dx' : 'dWeight')}  return { weight: dWeight, x: dx };
}
`;
  return {
    kind: 'matmul',
    forward: 'matVec',
    fileName: `matmul_${c}.ts`,
    text,
    params: [
      { name: 'weight', elements: r * c, optimalColours: c },
      { name: 'x', elements: c, optimalColours: c },
    ],
    elements: r * c + c,
    outputs: r,
    bugParam: inX ? 'x' : 'weight',
    shape: `W ${r}×${c}, x ${c}`,
    isMethod: false,
  };
}

function softmax(rows: number, bug?: SeededBug): BenchOp {
  const k = SOFTMAX_CLASSES;
  const n = rows * k;
  const b = bugCode(n, bug);
  const text = `// Benchmark op: softmax over each row of ${fmt(rows)} × ${k} logits (a block-diagonal Jacobian).
${b.decl}
/**
 * Softmax of each row.
 * @backward rowSoftmaxBackward(z, $y, $dy)
 * @sample z f64[${rows}, ${k}] in [-2, 2]
 */
export function rowSoftmax(z: Float64Array): Float64Array {
  const k = ${k};
  const y = new Float64Array(z.length);
  for (let base = 0; base < z.length; base += k) {
    let top = -Infinity;
    for (let j = 0; j < k; j++) top = Math.max(top, z[base + j]);
    let sum = 0;
    for (let j = 0; j < k; j++) {
      const e = Math.exp(z[base + j] - top);
      y[base + j] = e;
      sum += e;
    }
    for (let j = 0; j < k; j++) y[base + j] /= sum;
  }
  return y;
}

export function rowSoftmaxBackward(z: Float64Array, y: Float64Array, dy: Float64Array): Float64Array {
  const k = ${k};
  const g = new Float64Array(z.length);
  for (let base = 0; base < z.length; base += k) {
    let dot = 0;
    for (let j = 0; j < k; j++) dot += dy[base + j] * y[base + j];
    for (let j = 0; j < k; j++) g[base + j] = y[base + j] * (dy[base + j] - dot);
  }
${b.apply('g')}  return g;
}
`;
  return {
    kind: 'softmax',
    forward: 'rowSoftmax',
    fileName: `softmax_${rows}.ts`,
    text,
    params: [{ name: 'z', elements: n, optimalColours: k }],
    elements: n,
    outputs: n,
    bugParam: 'z',
    shape: `z ${fmt(rows)}×${k}`,
    isMethod: false,
  };
}

function conv1d(n: number, bug?: SeededBug): BenchOp {
  const t = CONV_TAPS;
  const half = (t - 1) / 2;
  const b = bugCode(n, bug);
  const text = `// Benchmark op: ${t}-tap 1-D convolution of ${fmt(n)} samples, zero padded to the same length (a banded Jacobian).
${b.decl}
/**
 * 1-D convolution, same length as the signal.
 * @backward conv1dBackward
 * @sample signal f64[${n}]
 * @sample kernel f64[${t}]
 */
export function conv1d(signal: Float64Array, kernel: Float64Array): Float64Array {
  const n = signal.length;
  const y = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let s = 0;
    for (let k = 0; k < ${t}; k++) {
      const j = i + k - ${half};
      if (j >= 0 && j < n) s += kernel[k] * signal[j];
    }
    y[i] = s;
  }
  return y;
}

export function conv1dBackward(signal: Float64Array, kernel: Float64Array, dy: Float64Array): { signal: Float64Array; kernel: Float64Array } {
  const n = signal.length;
  const dSignal = new Float64Array(n);
  const dKernel = new Float64Array(${t});
  for (let i = 0; i < n; i++) {
    const d = dy[i];
    for (let k = 0; k < ${t}; k++) {
      const j = i + k - ${half};
      if (j >= 0 && j < n) {
        dSignal[j] += kernel[k] * d;
        dKernel[k] += signal[j] * d;
      }
    }
  }
${b.apply('dSignal')}  return { signal: dSignal, kernel: dKernel };
}
`;
  return {
    kind: 'conv1d',
    forward: 'conv1d',
    fileName: `conv1d_${n}.ts`,
    text,
    params: [
      { name: 'signal', elements: n, optimalColours: Math.min(n, t) },
      { name: 'kernel', elements: t, optimalColours: t },
    ],
    elements: n + t,
    outputs: n,
    bugParam: 'signal',
    shape: `signal ${fmt(n)}, kernel ${t}`,
    isMethod: false,
  };
}

function layer(n: number, bug?: SeededBug): BenchOp {
  const b = bugCode(n, bug);
  const text = `// Benchmark op: a stateful layer y = tanh(gain ⊙ x + shift) with learned fields, ${fmt(n)} units;
// the forward caches its input and output for the backward.
${b.decl}
export class GainLayer {
  gain = new Float64Array(0);
  shift = new Float64Array(0);
  private input = new Float64Array(0);
  private output = new Float64Array(0);

  /**
   * @backward backward
   * @sample x f64[${n}] in [-2, 2]
   * @sample this.gain f64[${n}] in [0.5, 1.5]
   * @sample this.shift f64[${n}] in [-0.5, 0.5]
   */
  forward(x: Float64Array): Float64Array {
    const n = x.length;
    const y = new Float64Array(n);
    for (let i = 0; i < n; i++) y[i] = Math.tanh(this.gain[i] * x[i] + this.shift[i]);
    this.input = x;
    this.output = y;
    return y;
  }

  backward(dy: Float64Array): { x: Float64Array; gain: Float64Array; shift: Float64Array } {
    const n = dy.length;
    const dx = new Float64Array(n);
    const dGain = new Float64Array(n);
    const dShift = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      const y = this.output[i];
      const d = dy[i] * (1 - y * y);
      dx[i] = d * this.gain[i];
      dGain[i] = d * this.input[i];
      dShift[i] = d;
    }
${b.apply('dGain')}    return { x: dx, gain: dGain, shift: dShift };
  }
}
`.replace(/^ {2}for \(const i of BUG_AT\)/m, '    for (const i of BUG_AT)');
  return {
    kind: 'layer',
    forward: 'GainLayer.forward',
    fileName: `layer_${n}.ts`,
    text,
    params: [
      { name: 'x', elements: n, optimalColours: 1 },
      { name: 'this.gain', elements: n, optimalColours: 1 },
      { name: 'this.shift', elements: n, optimalColours: 1 },
    ],
    elements: 3 * n,
    outputs: n,
    bugParam: 'this.gain',
    shape: `x, gain, shift ${fmt(n)} each`,
    isMethod: true,
  };
}

function softmaxVector(n: number, bug?: SeededBug): BenchOp {
  const b = bugCode(n, bug);
  const text = `// Benchmark op: softmax over one vector of ${fmt(n)} logits (a dense Jacobian: every output moves with every logit).
${b.decl}
/**
 * Softmax of the whole vector.
 * @backward softmaxAllBackward(z, $y, $dy)
 * @sample z f64[${n}] in [-2, 2]
 */
export function softmaxAll(z: Float64Array): Float64Array {
  let top = -Infinity;
  for (let i = 0; i < z.length; i++) top = Math.max(top, z[i]);
  const y = new Float64Array(z.length);
  let sum = 0;
  for (let i = 0; i < z.length; i++) {
    const e = Math.exp(z[i] - top);
    y[i] = e;
    sum += e;
  }
  for (let i = 0; i < z.length; i++) y[i] /= sum;
  return y;
}

export function softmaxAllBackward(z: Float64Array, y: Float64Array, dy: Float64Array): Float64Array {
  let dot = 0;
  for (let i = 0; i < z.length; i++) dot += dy[i] * y[i];
  const g = new Float64Array(z.length);
  for (let i = 0; i < z.length; i++) g[i] = y[i] * (dy[i] - dot);
${b.apply('g')}  return g;
}
`;
  return {
    kind: 'softmaxVector',
    forward: 'softmaxAll',
    fileName: `softmax_vector_${n}.ts`,
    text,
    // The exact scheme: no two elements are structurally orthogonal, one column per element.
    params: [{ name: 'z', elements: n, optimalColours: n }],
    elements: n,
    outputs: n,
    bugParam: 'z',
    shape: `z ${fmt(n)}`,
    isMethod: false,
  };
}
