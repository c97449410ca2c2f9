// `@gradientField PARAM this.FIELD` (docs/annotations.md): where a method op's backward leaves the
// gradient of PARAM instead of returning it. Parses each tag and checks it against the op, every
// problem at the token it concerns, saying what to write instead.
import type { GradientField, ParamDescriptor } from '../model/types';
import { TagCursor } from './lexer';
import type { Span, SpanProblem } from './positions';
import { fixesField, suggestName } from './suggestion';
import type { RawTag } from './tagText';

/** What the op is, as far as the tag cares. */
export interface GradientFieldFacts {
  /** Display name of the forward (`Linear.forward`). */
  forward: string;
  isMethod: boolean;
  /** `function`: a `@backward NAME`; `library`: `@backward library-gradient`; `none`: no @backward. */
  backward: 'function' | 'library' | 'none';
  /** The op passes TensorFlow.js tensors. */
  tensors: boolean;
  params: readonly ParamDescriptor[];
  /** `@fixed` names (with @samples). */
  fixed: readonly string[];
  usesSamplesFactory: boolean;
}

const EXAMPLE = '`@gradientField this.W this.dW`';

/** Why the op cannot take the tag at all, or undefined. */
function opProblem(f: GradientFieldFacts): string | undefined {
  if (!f.isMethod) return `@gradientField applies to methods: the gradient is read from a field of the instance; a function's backward returns its gradients`;
  if (f.backward === 'none')
    return `@gradientField goes with @backward: it names the field where the backward leaves a gradient (a @jacobian, @tangent or @hessian function returns its derivative)`;
  if (f.backward === 'library') return `@gradientField does not apply to \`@backward library-gradient\`: the library returns every gradient`;
  if (f.tensors) return `@gradientField does not apply to an op on TensorFlow.js tensors: its backward returns the gradients as tensors`;
  return undefined;
}

/** Why a parameter of the op has no gradient, or undefined when it is differentiated. */
function notDifferentiated(p: ParamDescriptor, f: GradientFieldFacts): string | undefined {
  if (f.fixed.includes(p.name)) return `'${p.name}' is in @fixed, so it is not differentiated`;
  const s = p.sample;
  if (s === undefined) return f.usesSamplesFactory ? undefined : `'${p.name}' has no @sample (its default value applies), so it is not differentiated`;
  if (s.kind === 'literal') return `'${p.name}' is an exact value (\`= JSON\`), so it is not differentiated`;
  if (s.fixed) return `'${p.name}' is sampled \`fixed\`, so it is not differentiated`;
  if (s.dtype === 'i32' || s.dtype === 'int') return `'${p.name}' is sampled as integers (${s.dtype}), so it is not differentiated`;
  return undefined;
}

/** `x` or `this.NAME` at the cursor: the name and its span, or a problem. */
function readName(c: TagCursor, what: string): { name: string; span: Span; isField: boolean } | { problem: SpanProblem } {
  const t = c.next();
  if (!t || t.kind !== 'word') return { problem: c.problemAt(t, `@gradientField: expected ${what}${t ? `, found '${t.text}'` : ''}`) };
  if (t.text !== 'this' || c.peek()?.text !== '.') return { name: t.text, span: c.spanOf(t), isField: false };
  c.next();
  const f = c.next();
  if (f?.text === '#') {
    const name = c.peek()?.kind === 'word' ? c.peek()!.text : 'FIELD';
    return {
      problem: c.problemAt(
        f,
        `'this.#${name}' is a private (#) field: the check cannot zero or read it from outside the class; declare it \`private ${name}\` (TypeScript's private, a normal property at run time)`,
      ),
    };
  }
  if (!f || f.kind !== 'word') return { problem: c.problemAt(f ?? t, `@gradientField: expected \`this.FIELD\``) };
  return { name: `this.${f.text}`, span: { start: c.spanOf(t).start, end: c.spanOf(f).end }, isField: true };
}

/** The field a gradient would get by habit: `this.dW` for `this.W`, `this.dx` for `x`. */
function usualField(param: string): string {
  return `this.d${param.startsWith('this.') ? param.slice(5) : param}`;
}

/**
 * Reads the `@gradientField` tags of one op; problems go to `problems`. Returns the tags that
 * passed every check, in tag order.
 */
export function readGradientFieldTags(tags: readonly RawTag[], f: GradientFieldFacts, problems: SpanProblem[]): GradientField[] {
  const out: GradientField[] = [];
  if (tags.length === 0) return out;
  const wrongOp = opProblem(f);
  if (wrongOp !== undefined) {
    for (const t of tags) problems.push({ ...t.nameSpan, message: wrongOp });
    return out;
  }
  const differentiated = f.params.filter((p) => notDifferentiated(p, f) === undefined).map((p) => p.name);
  const sampledFields = f.params.filter((p) => p.isField).map((p) => p.name);
  for (const tag of tags) {
    const c = new TagCursor(tag);
    if (c.atEnd()) {
      problems.push({ ...tag.nameSpan, message: `@gradientField needs a parameter and the field holding its gradient, e.g. ${EXAMPLE}` });
      continue;
    }
    const param = readName(c, 'a parameter name or `this.FIELD`');
    if ('problem' in param) {
      problems.push(param.problem);
      continue;
    }
    const known = f.params.find((p) => p.name === param.name);
    const why = known ? notDifferentiated(known, f) : undefined;
    if (!known || why !== undefined) {
      const near = known ? { hint: '', fixes: [] } : suggestName(param.name, differentiated);
      const message = why ?? `'${param.name}' is not a differentiated parameter of ${f.forward}${near.hint}`;
      problems.push({ ...param.span, message: `@gradientField: ${message}`, ...fixesField(near.fixes) });
      continue;
    }
    const earlier = out.find((g) => g.param === param.name);
    if (earlier) {
      problems.push({ ...param.span, message: `@gradientField: '${param.name}' already has its gradient in this.${earlier.field}; give each parameter one tag` });
      continue;
    }
    if (c.atEnd()) {
      problems.push({
        ...tag.span,
        message: `@gradientField ${param.name}: expected the field holding its gradient after the parameter, e.g. \`@gradientField ${param.name} ${usualField(param.name)}\``,
      });
      continue;
    }
    const field = readName(c, 'the field holding the gradient, `this.FIELD`');
    if ('problem' in field) {
      problems.push(field.problem);
      continue;
    }
    if (!field.isField) {
      const fix = `this.${field.name}`;
      problems.push({ ...field.span, message: `@gradientField: the gradient's field is written \`${fix}\`, found '${field.name}'`, fixes: [{ kind: 'replace', text: fix }] });
      continue;
    }
    if (sampledFields.includes(field.name)) {
      problems.push({
        ...field.span,
        message: `@gradientField: '${field.name}' is an input of the op (it has a @sample); the gradient needs a field of its own, e.g. \`${usualField(param.name)}\``,
      });
      continue;
    }
    const bare = field.name.slice(5);
    const sharing = out.find((g) => g.field === bare);
    if (sharing) {
      problems.push({ ...field.span, message: `@gradientField: ${field.name} already holds the gradient of '${sharing.param}'; each gradient needs a field of its own` });
      continue;
    }
    const extra = c.next();
    if (extra) {
      problems.push(c.problemAt(extra, `@gradientField: unexpected '${extra.text}' after the field (one parameter and one field per tag)`));
      continue;
    }
    out.push({ param: param.name, field: bare });
  }
  return out;
}
