// The forward's parameters as discovery sees them (plain names, destructured patterns, defaults,
// a customGrad's save function left out) and how a @sample tag's target fits them.
import ts from 'typescript';
import type { ParamDescriptor, ProblemFix, SampleSpec } from '../model/types';
import type { ForwardSite } from './forwardSites';
import type { Span, SpanProblem } from './positions';
import type { SampleTarget } from './sampleTag';
import { displayName } from './siteNames';
import { fixesField, suggestName } from './suggestion';
import { customGradSaveParam } from './tensorOps';
import type { RawTag } from './tagText';

export interface ForwardParams {
  /** Names in order: an identifier's text, or a destructured parameter's pattern. */
  paramNames: string[];
  paramSpans: Map<string, Span>;
  /** Parameters with a default value or `?`: they need no @sample (passed as undefined). */
  defaulted: Set<string>;
  destructured: Set<string>;
}

/**
 * Forward parameters: plain names; a destructured one is known by its pattern; one with a
 * default value need not be sampled (it is passed as undefined, so its default applies).
 */
export function readForwardParams(site: ForwardSite, rawTags: RawTag[], problems: SpanProblem[]): ForwardParams {
  const paramNames: string[] = [];
  const paramSpans = new Map<string, Span>();
  const defaulted = new Set<string>();
  const destructured = new Set<string>();
  const usesFactory = rawTags.some((t) => t.name === 'samples');
  const saveParam = customGradSaveParam(site, rawTags);
  for (const p of site.fn?.parameters ?? []) {
    if (ts.isIdentifier(p.name) && p.name.text === 'this') continue; // TypeScript's `this` type, not an argument
    if (p === saveParam) continue; // customGrad's save function, passed by the library
    if (p.dotDotDotToken) {
      problems.push({
        start: p.getStart(),
        end: p.getEnd(),
        message: `a rest parameter (found '${p.getText()}') cannot be sampled: list the parameters one by one, or pass an array parameter`,
      });
      continue;
    }
    const name = ts.isIdentifier(p.name) ? p.name.text : p.name.getText().replace(/\s+/g, ' ');
    if (!ts.isIdentifier(p.name)) {
      destructured.add(name);
      if (!p.initializer && !usesFactory) {
        problems.push({
          start: p.name.getStart(),
          end: p.name.getEnd(),
          message: `a destructured parameter ('${name}') has no name for @sample: give it a default value (\`${name}: T = DEFAULTS\`) so it need not be sampled, or name it (\`opts: T\`, destructured in the body) and add \`@sample opts = JSON\`, or supply the arguments with @samples FACTORY`,
        });
      }
    }
    if (p.initializer || p.questionToken) defaulted.add(name);
    paramNames.push(name);
    paramSpans.set(name, { start: p.name.getStart(), end: p.name.getEnd() });
  }
  return { paramNames, paramSpans, defaulted, destructured };
}

/** A parameter descriptor with its sample spec when it has one. */
export function withSample(p: { name: string; isField: boolean; hasDefault?: boolean }, spec: SampleSpec | undefined): ParamDescriptor {
  return spec ? { ...p, sample: spec } : p;
}

/** Why a `@sample` target does not fit this op, or undefined when it does. */
export function sampleTargetProblem(
  target: SampleTarget,
  isMethod: boolean,
  paramNames: readonly string[],
  samples: ReadonlyMap<string, unknown>,
  samplesFactory: string | undefined,
  site: ForwardSite,
): { message: string; fixes?: ProblemFix[] } | undefined {
  if (target.isField && !isMethod) return { message: `'${target.name}': this.FIELD samples only apply to methods` };
  if (!target.isField && !paramNames.includes(target.name)) {
    const near = suggestName(target.name, paramNames);
    return { message: `@sample: '${target.name}' is not a parameter of ${displayName(site)}${near.hint}`, ...fixesField(near.fixes) };
  }
  if (samples.has(target.name)) return { message: `@sample ${target.name} is given twice` };
  if (!target.isField && samplesFactory)
    return { message: `@sample ${target.name} conflicts with @samples ${samplesFactory}: the factory supplies the arguments (use @fixed for ones not differentiated)` };
  return undefined;
}
