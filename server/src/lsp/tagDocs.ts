// What each of our JSDoc tags means, in one line and one example, for tag completion and tag
// hovers. The wording follows the README's tag table (README.md, "Annotating an op").

export interface TagDoc {
  name: string;
  /** One line: what the tag does. */
  summary: string;
  /** One example line, as written in a JSDoc block. */
  example: string;
  /** Snippet inserted after `@`, with tab stops. */
  snippet: string;
}

/** The tags that name a derivative function; each makes a forward an op of that kind. */
export const DERIVATIVE_TAGS = ['backward', 'jacobian', 'tangent', 'hessian'] as const;

export const TAG_DOCS: readonly TagDoc[] = [
  {
    name: 'backward',
    summary:
      'Marks the op and names its hand-written backward (vector-Jacobian product); arguments: forward parameter names, `$y` (the output), `$dy` (the upstream gradient). Default: every parameter, then `$dy`.',
    example: '@backward softplusBackward(x, $dy)',
    snippet: 'backward ${1:name}',
  },
  {
    name: 'sample',
    summary:
      'How to draw one parameter: `f64[d1, ...]`, `f32[...]`, `num[...]`, `num`, `i32[...]`, `int`, then `in [lo, hi]`, `avoid v1, v2`, `fixed`; or `= JSON` for an exact value.',
    example: '@sample x f64[64] in [-6, 6]',
    snippet: 'sample ${1:param} ${2:f64[8]}',
  },
  {
    name: 'samples',
    summary: 'An exported `(random) => args` factory that builds the whole argument list instead of `@sample` tags.',
    example: '@samples makeInputs',
    snippet: 'samples ${1:factory}',
  },
  {
    name: 'fixed',
    summary: 'With `@samples`: arguments drawn by the factory but not differentiated.',
    example: '@fixed target, mask',
    snippet: 'fixed ${1:param}',
  },
  {
    name: 'construct',
    summary: 'For a method op: the function that builds the instance the method is called on (default `new Class()`).',
    example: '@construct makeSmoother',
    snippet: 'construct ${1:factory}',
  },
  {
    name: 'gradientField',
    summary:
      "For a method whose backward leaves a parameter's gradient on the instance: read it from that field after each backward call. The check sets the field to zero before every call, as a training loop does; the return value holds the other gradients.",
    example: '@gradientField this.W this.dW',
    snippet: 'gradientField ${1:param} this.${2:field}',
  },
  {
    name: 'tolerance',
    summary: 'Relative tolerance of this op, overriding the setting and the project file.',
    example: '@tolerance 1e-7',
    snippet: 'tolerance ${1:1e-7}',
  },
  {
    name: 'seed',
    summary: "Seed of this op's input generator, so a result can be reproduced.",
    example: '@seed 42',
    snippet: 'seed ${1:42}',
  },
  {
    name: 'jacobian',
    summary: 'Names a function returning the full Jacobian (m×n, row-major, one matrix per differentiated parameter).',
    example: '@jacobian softmaxJacobian',
    snippet: 'jacobian ${1:name}',
  },
  {
    name: 'tangent',
    summary: "Names a Jacobian-vector product J·t; `$d` + a parameter name is that parameter's tangent. Default: every parameter, then one tangent each.",
    example: '@tangent scaleTangent(x, $dx)',
    snippet: 'tangent ${1:name}',
  },
  {
    name: 'hessian',
    summary: 'For a number-valued forward: names the Hessian (n×n), or the Hessian-vector product H·v when `$v` is in its argument list.',
    example: '@hessian energyHessian(x, $v)',
    snippet: 'hessian ${1:name}',
  },
];

export function tagDoc(name: string): TagDoc | undefined {
  return TAG_DOCS.find((t) => t.name === name);
}

/** The hover text of a tag: the line and the example. */
export function tagMarkdown(doc: TagDoc): string {
  return [`**@${doc.name}** — ${doc.summary}`, '', '```ts', ` * ${doc.example}`, '```'].join('\n');
}
