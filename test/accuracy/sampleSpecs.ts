// Reads the simple function ops of a corpus file (top-level functions whose every parameter has
// an `@sample` tag) and draws seeded inputs for them. Written independently of the product's own
// discovery and sampler, so the fixed-step contrast does not lean on the code it is compared with.

import ts from 'typescript';

/** One `@sample` spec, as far as the contrast needs it. */
export type ContrastSpec =
  { kind: 'literal'; value: unknown } | { kind: 'random'; dtype: 'f64' | 'f32' | 'num' | 'i32' | 'int'; shape: number[]; range: [number, number]; fixed: boolean };

/** A top-level function op with a sample spec for every parameter. */
export interface SimpleOp {
  forward: string;
  backward: string;
  params: { name: string; spec: ContrastSpec }[];
  /** The backward's argument list: parameter names, '$y' and '$dy'. */
  backwardArgs: string[];
}

const SPEC = /^(f64|f32|num|i32|int)(?:\[([\d,\s]+)\])?(?:\s+in\s+\[([^\]]+)\])?(?:\s+avoid\s+[-+\d.eE,\s]+?)?(\s+fixed)?$/;

/** Parses the text after `@sample NAME`; null when the contrast cannot read it. */
export function parseSpec(text: string): ContrastSpec | null {
  const t = text.trim();
  if (t.startsWith('=')) return { kind: 'literal', value: JSON.parse(t.slice(1)) as unknown };
  const m = SPEC.exec(t);
  if (!m) return null;
  const shape = m[2] ? m[2].split(',').map((d) => Number(d.trim())) : [];
  const range = m[3] ? (m[3].split(',').map((v) => Number(v.trim())) as [number, number]) : ([-1, 1] as [number, number]);
  return { kind: 'random', dtype: m[1] as 'f64', shape, range, fixed: Boolean(m[4]) };
}

/** Every simple function op of one source text, in source order. */
export function findSimpleOps(fileName: string, text: string): SimpleOp[] {
  const source = ts.createSourceFile(fileName, text, ts.ScriptTarget.ES2022, true);
  const ops: SimpleOp[] = [];
  for (const statement of source.statements) {
    let name: string | undefined;
    let fn: ts.SignatureDeclaration | undefined;
    let tagged: ts.Node = statement;
    if (ts.isFunctionDeclaration(statement) && statement.name) {
      name = statement.name.text;
      fn = statement;
    } else if (ts.isVariableStatement(statement)) {
      const decl = statement.declarationList.declarations[0];
      const init = decl?.initializer;
      if (decl && ts.isIdentifier(decl.name) && init && (ts.isArrowFunction(init) || ts.isFunctionExpression(init))) {
        name = decl.name.text;
        fn = init;
        tagged = statement;
      }
    }
    if (!name || !fn) continue;
    const tags = jsDocTagLines(tagged, source);
    const backwardTag = tags.find((t) => t.tag === 'backward');
    if (!backwardTag || tags.some((t) => t.tag === 'samples')) continue;
    const paramNames = fn.parameters.map((p) => p.name.getText(source));
    const specs = new Map<string, ContrastSpec | null>();
    for (const t of tags.filter((t) => t.tag === 'sample')) {
      const m = /^(\S+)\s+(.*)$/.exec(t.text);
      if (m) specs.set(m[1], parseSpec(m[2]));
    }
    if (!paramNames.every((p) => specs.get(p))) continue;
    const bm = /^([A-Za-z_$][\w$]*)\s*(?:\(([^)]*)\))?\s*$/.exec(backwardTag.text);
    if (!bm) continue;
    const backwardArgs =
      bm[2] !== undefined
        ? bm[2]
            .split(',')
            .map((a) => a.trim())
            .filter(Boolean)
        : [...paramNames, '$dy'];
    ops.push({
      forward: name,
      backward: bm[1],
      params: paramNames.map((p) => ({ name: p, spec: specs.get(p) as ContrastSpec })),
      backwardArgs,
    });
  }
  return ops;
}

/** The `@tag text` lines of the JSDoc blocks attached to a node. */
function jsDocTagLines(node: ts.Node, source: ts.SourceFile): { tag: string; text: string }[] {
  const out: { tag: string; text: string }[] = [];
  for (const range of ts.getLeadingCommentRanges(source.text, node.getFullStart()) ?? []) {
    const comment = source.text.slice(range.pos, range.end);
    if (!comment.startsWith('/**')) continue;
    for (const line of comment.split('\n')) {
      const m = /^\s*\*?\s*@(\w+)\s*(.*?)\s*(?:\*\/)?\s*$/.exec(line);
      if (m) out.push({ tag: m[1], text: m[2] });
    }
  }
  return out;
}

/** A seeded uniform generator on [0, 1) (mulberry32, a common 32-bit mixing generator). */
export function seededRandom(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Draws one value for a spec (a deep copy for literals). */
export function drawValue(spec: ContrastSpec, random: () => number): unknown {
  if (spec.kind === 'literal') return JSON.parse(JSON.stringify(spec.value)) as unknown;
  const [lo, hi] = spec.range;
  const isInt = spec.dtype === 'i32' || spec.dtype === 'int';
  const one = (): number => (isInt ? lo + Math.floor(random() * (hi - lo + 1)) : lo + (hi - lo) * random());
  const count = spec.shape.reduce((a, b) => a * b, 1);
  switch (spec.dtype) {
    case 'f64':
      return Float64Array.from({ length: count }, one);
    case 'f32':
      return Float32Array.from({ length: count }, one);
    case 'i32':
      return Int32Array.from({ length: count }, one);
    default: {
      if (spec.shape.length === 0) return one();
      const build = (dims: number[]): unknown => (dims.length === 1 ? Array.from({ length: dims[0] }, one) : Array.from({ length: dims[0] }, () => build(dims.slice(1))));
      return build(spec.shape);
    }
  }
}
