// The argument list of an op's @backward: the default (the forward's parameters, then `$dy`;
// `$dy` alone for a method) or the one its tag lists, each name checked against the forward.
import type { BackwardArg } from '../model/types';
import type { ForwardSite } from './forwardSites';
import type { ParsedBackward } from './otherTags';
import type { SpanProblem } from './positions';
import { nonNumberReturn } from './returnType';
import { displayName } from './siteNames';
import { fixesField, suggestName } from './suggestion';

/** The default list: the forward's parameters and `$dy` (a method: `$dy` alone). */
export function defaultBackwardArgs(isMethod: boolean, paramNames: readonly string[]): BackwardArg[] {
  if (isMethod) return [{ kind: 'upstream' }];
  return [...paramNames.map((name): BackwardArg => ({ kind: 'param', name })), { kind: 'upstream' }];
}

/** The list the @backward tag gives, each name checked against the forward and its samples. */
export function explicitBackwardArgs(
  parsed: ParsedBackward,
  site: ForwardSite,
  paramNames: readonly string[],
  samples: ReadonlyMap<string, unknown>,
  problems: SpanProblem[],
): BackwardArg[] {
  const args: BackwardArg[] = [];
  const seen = new Set<string>();
  for (const a of parsed.args ?? []) {
    const key = a.kind === 'param' ? a.name : a.kind === 'output' ? '$y' : '$dy';
    if (seen.has(key)) problems.push({ ...a.span, message: `@backward: '${key}' is listed twice` });
    seen.add(key);
    if (a.kind !== 'param') {
      args.push({ kind: a.kind });
      continue;
    }
    if (a.isField) {
      if (site.kind !== 'method') problems.push({ ...a.span, message: `@backward: '${a.name}' names a field, but ${displayName(site)} is not a method` });
      else if (!samples.has(a.name)) problems.push({ ...a.span, message: `@backward: '${a.name}' has no @sample; add \`@sample ${a.name} SPEC\` to pass it` });
    } else if (!paramNames.includes(a.name)) {
      const near = suggestName(a.name, paramNames);
      problems.push({ ...a.span, message: `@backward: '${a.name}' is not a parameter of ${displayName(site)}${near.hint}`, ...fixesField(near.fixes) });
    }
    args.push({ kind: 'param', name: a.name });
  }
  if (!seen.has('$dy') && parsed.listSpan) {
    const returns = nonNumberReturn(site.fn?.type);
    if (returns) {
      problems.push({ ...parsed.listSpan, message: `@backward: the list has no $dy, but ${displayName(site)} returns ${returns}; without $dy the forward must return a number` });
    }
  }
  return args;
}
