// What discovery adds to an op that works with TensorFlow.js: which parameters are tensors,
// which parameter of a `customGrad` function is its save function, the float32 rule for tensor
// samples, and `@backward library-gradient` with its near misses.
import ts from 'typescript';
import type { ParamDescriptor } from '../model/types';
import type { ForwardSite } from './forwardSites';
import type { Span, SpanProblem } from './positions';
import { LIBRARY_GRADIENT, isSaveFunctionType, isTensorType, nearLibraryGradient, tensorLibraryImports, type TensorLibraryImports } from './tensorLibrary';
import type { RawTag } from './tagText';

const importsBySource = new WeakMap<ts.SourceFile, TensorLibraryImports>();

/** The library imports of the site's file (read once per parse). */
export function libraryOf(site: ForwardSite): TensorLibraryImports {
  const sf = site.docHost.getSourceFile();
  let lib = importsBySource.get(sf);
  if (!lib) {
    lib = tensorLibraryImports(sf);
    importsBySource.set(sf, lib);
  }
  return lib;
}

/** The first word of a tag body (the parameter a `@sample` names). */
function firstWord(body: string): string {
  return /^\s*([\p{ID_Start}$_][\p{ID_Continue}$]*)/u.exec(body)?.[1] ?? '';
}

/**
 * The save function of a `customGrad` function: its last parameter when that is typed
 * `GradSaveFunc`, or untyped and named by no `@sample` (the library passes the inputs, then the
 * save function).
 */
export function customGradSaveParam(site: ForwardSite, rawTags: readonly RawTag[]): ts.ParameterDeclaration | undefined {
  if (!site.customGrad || !site.fn) return undefined;
  const last = site.fn.parameters[site.fn.parameters.length - 1];
  if (!last || !ts.isIdentifier(last.name)) return undefined;
  if (isSaveFunctionType(last.type, libraryOf(site))) return last;
  if (last.type) return undefined;
  const name = last.name.text;
  const sampled = rawTags.some((t) => t.name === 'sample' && firstWord(t.body) === name);
  return sampled ? undefined : last;
}

/** A `@sample` tag with the parameter it draws. */
export interface SampleTagRef {
  param: string;
  span: Span;
}

/**
 * Marks the tensor parameters (declared with a tensor type, or inputs of a `customGrad`
 * function) and reports samples a tensor cannot hold exactly. Returns whether the op has any.
 */
export function markTensorParams(site: ForwardSite, params: ParamDescriptor[], sampleTags: readonly SampleTagRef[], problems: SpanProblem[]): boolean {
  if (!site.fn) return false;
  const lib = libraryOf(site);
  const declared = new Map<string, ts.ParameterDeclaration>();
  for (const p of site.fn.parameters) if (ts.isIdentifier(p.name)) declared.set(p.name.text, p);
  let any = false;
  for (const p of params) {
    const decl = declared.get(p.name);
    if (p.isField || !decl) continue;
    if (!(isTensorType(decl.type, lib) || (site.customGrad && !decl.type))) continue;
    p.tensor = true;
    any = true;
    const spec = p.sample;
    if (spec?.kind === 'random' && (spec.dtype === 'f64' || spec.dtype === 'num')) {
      const tag = sampleTags.find((t) => t.param === p.name);
      const shape = spec.shape.length ? `[${spec.shape.join(', ')}]` : '';
      problems.push({
        ...(tag?.span ?? { start: decl.getStart(), end: decl.getEnd() }),
        message: `@sample ${p.name}: '${p.name}' is a TensorFlow.js tensor, and the library computes in float32; sample it as \`f32${shape}\` (${spec.dtype} values would be rounded to float32 and judged with float64 tolerances)`,
      });
    }
  }
  return any;
}

export type LibraryGradientTag = { kind: 'library'; problems: SpanProblem[] } | { kind: 'near-miss'; problems: SpanProblem[] } | { kind: 'other' };

/**
 * Reads a `@backward` tag body as the library-gradient form, a near miss of it (when the word
 * names nothing in the module), or neither.
 */
export function readLibraryGradientTag(raw: RawTag, site: ForwardSite, isBinding: (name: string) => boolean): LibraryGradientTag {
  const body = raw.body.trim();
  const span: Span = raw.span;
  if (body === LIBRARY_GRADIENT || body.startsWith(`${LIBRARY_GRADIENT} `) || body.startsWith(`${LIBRARY_GRADIENT}(`)) {
    const problems: SpanProblem[] = [];
    const rest = body.slice(LIBRARY_GRADIENT.length).trim();
    if (rest)
      problems.push({
        ...span,
        message: `@backward ${LIBRARY_GRADIENT} takes nothing after it (found '${rest}'): the library differentiates the forward with respect to every sampled parameter`,
      });
    if (site.kind === 'method') problems.push({ ...span, message: `@backward ${LIBRARY_GRADIENT} applies to functions and customGrad consts, not methods` });
    else if (!libraryOf(site).specifier) {
      problems.push({
        ...span,
        message: `@backward ${LIBRARY_GRADIENT}: this module imports no TensorFlow.js package (@tensorflow/tfjs or @tensorflow/tfjs-core), so there is no library to take the gradient from`,
      });
    }
    return { kind: 'library', problems };
  }
  const word = firstWord(body);
  if (nearLibraryGradient(body) && !isBinding(word)) {
    return {
      kind: 'near-miss',
      problems: [{ ...span, message: `@backward ${body}: no such function here; did you mean \`@backward ${LIBRARY_GRADIENT}\` (the library's own gradient of the forward)?` }],
    };
  }
  return { kind: 'other' };
}

/** A problem for an unknown tag that looks like an attempt at the library-gradient form. */
export function libraryGradientTagNameProblem(raw: RawTag): SpanProblem | undefined {
  if (!nearLibraryGradient(raw.name)) return undefined;
  return { ...raw.nameSpan, message: `unknown tag @${raw.name}; the library's own gradient is asked for with \`@backward ${LIBRARY_GRADIENT}\`` };
}

/** Problems when an op passes tensors but its module imports no TensorFlow.js package. */
export function tensorLibraryProblem(site: ForwardSite): string | undefined {
  return libraryOf(site).specifier ? undefined : `${site.name} takes TensorFlow.js tensors, but this module imports no TensorFlow.js package to make them with`;
}
