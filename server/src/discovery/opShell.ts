// The parts of an op that do not depend on its tags' meaning: its file and the place of its
// forward's name, and the op that carries only problems when its tags stand where no op can be.
import type { OpDescriptor, TagLocation } from '../model/types';
import type { BuildContext } from './buildOp';
import type { ForwardSite } from './forwardSites';
import type { SpanProblem } from './positions';
import type { OpTagName } from './tagNames';
import { displayName } from './siteNames';
import type { RawTag } from './tagText';

/** The op's file and the span of its forward's name (1-based). */
export function opPlace(site: ForwardSite, ctx: BuildContext): Pick<OpDescriptor, 'file' | 'line' | 'column' | 'endLine' | 'endColumn'> {
  const start = ctx.mapper.at(site.nameSpan.start);
  const end = ctx.mapper.at(site.nameSpan.end);
  return { file: ctx.fileName, line: start.line, column: start.column, endLine: end.line, endColumn: end.column };
}

/** An op whose tags stand where no op can be (on a class): its one problem, nothing parsed. */
export function misplacedOp(site: ForwardSite, ctx: BuildContext, problems: SpanProblem[], ours: readonly { name: OpTagName; raw: RawTag }[]): OpDescriptor {
  const tags: TagLocation[] = ours.map((t) => {
    const a = ctx.mapper.at(t.raw.span.start);
    const b = ctx.mapper.at(t.raw.span.end);
    return { tag: t.name, line: a.line, column: a.column, endLine: b.line, endColumn: b.column };
  });
  return {
    ...opPlace(site, ctx),
    forward: displayName(site),
    backward: '',
    target: { kind: site.kind, forwardName: site.name, backwardName: '', backwardIsMethod: false },
    params: [],
    backwardArgs: [],
    fixed: [],
    tags,
    problems: problems.sort((a, b) => a.start - b.start).map((p) => ctx.mapper.problem(p)),
  };
}
