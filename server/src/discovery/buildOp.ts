// Turns one annotated declaration (a ForwardSite and its JSDoc tags) into an OpDescriptor:
// parses every tag, matches @sample tags to parameters, resolves the backward and factories in
// the module (functionLookup.ts), builds the backward's argument list (backwardArgs.ts), and
// records each mistake where it stands.
import { DEFAULT_EXPORT_BINDING, type OpDescriptor, type ParamDescriptor, type SampleSpec, type TagLocation } from '../model/types';
import { defaultBackwardArgs, explicitBackwardArgs } from './backwardArgs';
import { backwardArgsFromNames, backwardSignatureProblem } from './backwardSignature';
import { DERIVATIVE_KINDS, defaultDerivativeArgs, explicitDerivativeArgs, parseDerivativeTag } from './derivativeTags';
import type { ForwardSite } from './forwardSites';
import { checkTopLevelFunction, functionFlavour, resolveBackward } from './functionLookup';
import { declaresPrivateMembers, type ModuleBindings } from './moduleBindings';
import { parseBackwardTag, parseNameListTag, parseNameTag, parseSeedTag, parseToleranceTag, type ParsedBackward } from './otherTags';
import type { PositionMapper, SpanProblem } from './positions';
import { nonNumberReturn } from './returnType';
import { readForwardParams, sampleTargetProblem, withSample } from './forwardParams';
import { parseSampleTag } from './sampleTag';
import { displayName } from './siteNames';
import { fixesField, suggestName, suggestionOf } from './suggestion';
import { classifyTag, type OpTagName } from './tagNames';
import { misplacedOp, opPlace } from './opShell';
import { readGradientFieldTags } from './gradientFieldTag';
import { libraryGradientTagNameProblem, markTensorParams, readLibraryGradientTag, tensorLibraryProblem, libraryOf, type SampleTagRef } from './tensorOps';
import type { RawTag } from './tagText';

export interface BuildContext {
  fileName: string;
  bindings: ModuleBindings;
  mapper: PositionMapper;
}

/** Tags that make a declaration an op, or show that one was meant (then reported as incomplete). */
const OP_MARKING_TAGS: readonly OpTagName[] = ['backward', 'sample', 'samples', 'gradientField', ...DERIVATIVE_KINDS];
/** Tags an op may carry once. */
const SINGLE_TAGS: readonly OpTagName[] = ['backward', 'samples', 'construct', 'tolerance', 'seed', ...DERIVATIVE_KINDS];

interface OurTag {
  name: OpTagName;
  raw: RawTag;
}

/**
 * Builds the ops of a declaration: one per derivative tag (`@backward`, `@jacobian`, `@tangent`,
 * `@hessian`), or one op carrying the problems when none is usable; [] when its JSDoc does not
 * mark an op.
 */
export function buildOp(site: ForwardSite, rawTags: RawTag[], ctx: BuildContext): OpDescriptor[] {
  const problems: SpanProblem[] = [];
  const ours: OurTag[] = [];
  let marked = false;
  // A misspelt @backward (or other derivative tag) is reported as such, not as a missing one.
  let misspeltDerivative = false;
  for (const raw of rawTags) {
    const cls = classifyTag(raw.name);
    if (cls.kind === 'ours') {
      ours.push({ name: cls.name, raw });
      if (OP_MARKING_TAGS.includes(cls.name)) marked = true;
    } else if (cls.kind === 'misspelled') {
      const fix = suggestionOf(`@${cls.suggestion}`);
      problems.push({ ...raw.nameSpan, message: `unknown tag @${raw.name}${fix.hint}`, fixes: fix.fixes });
      if (OP_MARKING_TAGS.includes(cls.suggestion)) marked = true;
      if (cls.suggestion === 'backward' || (DERIVATIVE_KINDS as readonly string[]).includes(cls.suggestion)) misspeltDerivative = true;
    } else {
      const near = libraryGradientTagNameProblem(raw);
      if (near) problems.push(near);
    }
  }
  if (!marked) return [];

  if (site.unsupported) problems.push({ ...site.nameSpan, message: site.unsupported });
  // The tags are misplaced as a whole: what they say does not matter here.
  if (site.onlyProblem) {
    // Broken specs are still named where they stand, so the tag is never silently skipped.
    for (const t of ours) if (t.name === 'sample') problems.push(...parseSampleTag(t.raw).problems);
    return [misplacedOp(site, ctx, problems, ours)];
  }

  // Tags given more than once where one is meant.
  const firstOf = new Map<OpTagName, OurTag>();
  for (const t of ours) {
    if (firstOf.has(t.name) && SINGLE_TAGS.includes(t.name)) problems.push({ ...t.raw.nameSpan, message: `@${t.name} is given twice; an op takes one` });
    if (!firstOf.has(t.name)) firstOf.set(t.name, t);
  }
  const isMethod = site.kind === 'method';

  const { paramNames, paramSpans, defaulted, destructured } = readForwardParams(site, rawTags, problems);

  // @samples and @construct factories.
  const samplesTag = firstOf.get('samples');
  let samplesFactory: string | undefined;
  if (samplesTag) {
    const r = parseNameTag(samplesTag.raw, 'a function (random) => argument list');
    problems.push(...r.problems);
    if (r.name && r.span) {
      samplesFactory = r.name;
      checkTopLevelFunction(r.name, r.span, '@samples factory', ctx.bindings, problems);
    }
  }
  const constructTag = firstOf.get('construct');
  let constructFactory: string | undefined;
  if (constructTag) {
    const r = parseNameTag(constructTag.raw, 'a function returning the instance');
    problems.push(...r.problems);
    if (!isMethod) problems.push({ ...constructTag.raw.nameSpan, message: '@construct only applies to methods: it builds the instance the method is called on' });
    else if (r.name && r.span) {
      constructFactory = r.name;
      checkTopLevelFunction(r.name, r.span, '@construct factory', ctx.bindings, problems);
    }
  }

  // @sample tags, matched to parameters and fields.
  const samples = new Map<string, SampleSpec | undefined>();
  const fieldOrder: string[] = [];
  const sampleTargets = new Map<RawTag, string>();
  for (const t of ours) {
    if (t.name !== 'sample') continue;
    const parsed = parseSampleTag(t.raw);
    problems.push(...parsed.problems);
    const target = parsed.target;
    if (!target) continue;
    sampleTargets.set(t.raw, target.name);
    const misplaced = sampleTargetProblem(target, isMethod, paramNames, samples, samplesFactory, site);
    if (misplaced) {
      problems.push({ ...target.span, ...misplaced });
      continue;
    }
    samples.set(target.name, parsed.spec);
    if (target.isField) fieldOrder.push(target.name);
  }
  if (!samplesTag) {
    for (const name of paramNames) {
      if (!samples.has(name) && !defaulted.has(name) && !destructured.has(name))
        problems.push({
          ...paramSpans.get(name)!,
          message: `parameter '${name}' has no @sample: add \`@sample ${name} SPEC\` (or use @samples FACTORY)`,
          fixes: [{ kind: 'add-samples' }],
        });
    }
  }
  const params: ParamDescriptor[] = [
    ...paramNames.map((name) => withSample(defaulted.has(name) && !samples.has(name) ? { name, isField: false, hasDefault: true } : { name, isField: false }, samples.get(name))),
    ...fieldOrder.map((name) => withSample({ name, isField: true }, samples.get(name))),
  ];
  const sampleTagRefs: SampleTagRef[] = [];
  for (const [raw, param] of sampleTargets) sampleTagRefs.push({ param, span: raw.span });
  const hasTensors = markTensorParams(site, params, sampleTagRefs, problems);
  if (hasTensors) {
    const noLibrary = tensorLibraryProblem(site);
    if (noLibrary) problems.push({ ...site.nameSpan, message: noLibrary });
  }

  // @fixed (with @samples).
  const fixed: string[] = [];
  for (const t of ours) {
    if (t.name !== 'fixed') continue;
    const r = parseNameListTag(t.raw);
    problems.push(...r.problems);
    if (!samplesTag) {
      problems.push({ ...t.raw.nameSpan, message: '@fixed goes with @samples; with @sample, write `fixed` at the end of the spec' });
      continue;
    }
    for (const n of r.names) {
      const known = n.name.startsWith('this.') ? samples.has(n.name) : paramNames.includes(n.name);
      if (!known) {
        const near = suggestName(n.name, paramNames);
        problems.push({ ...n.span, message: `@fixed: '${n.name}' is not a parameter of ${displayName(site)}${near.hint}`, ...fixesField(near.fixes) });
      } else if (!fixed.includes(n.name)) fixed.push(n.name);
    }
  }

  // @tolerance and @seed.
  let tolerance: number | undefined;
  const tolTag = firstOf.get('tolerance');
  if (tolTag) {
    const r = parseToleranceTag(tolTag.raw);
    problems.push(...r.problems);
    tolerance = r.value;
  }
  let seed: number | undefined;
  const seedTag = firstOf.get('seed');
  if (seedTag) {
    const r = parseSeedTag(seedTag.raw);
    problems.push(...r.problems);
    seed = r.value;
  }

  // The forward itself must be callable synchronously.
  const fnFlags = site.fn ? functionFlavour(site.fn) : undefined;
  if (fnFlags) problems.push({ ...site.nameSpan, message: `${displayName(site)} is ${fnFlags}: checks call the forward synchronously and need a plain return value` });

  // Problems so far concern every derivative of this forward; the rest only the @backward op
  // (a copy: the @backward op's list is sorted in place below).
  const sharedProblems = [...problems];
  const derivativeTags = DERIVATIVE_KINDS.flatMap((k) => (firstOf.has(k) ? [{ kind: k, tag: firstOf.get(k)! }] : []));

  // @backward: name, resolution, argument list.
  const backTag = firstOf.get('backward');
  let parsedBack: ParsedBackward = { problems: [] };
  const libraryForm = backTag ? readLibraryGradientTag(backTag.raw, site, (n) => ctx.bindings.topLevel.has(n)) : { kind: 'other' as const };
  if (libraryForm.kind !== 'other') {
    problems.push(...libraryForm.problems);
  } else if (backTag) {
    parsedBack = parseBackwardTag(backTag.raw);
    problems.push(...parsedBack.problems);
  } else if (derivativeTags.length === 0 && !misspeltDerivative) {
    const first = ours[0]?.raw.nameSpan ?? site.nameSpan;
    problems.push({ ...first, message: `${displayName(site)} has sampling tags but no @backward: add \`@backward NAME\` naming its gradient function` });
  }
  const libraryGradient = libraryForm.kind === 'library';
  const backwardName = parsedBack.name ?? '';
  const resolved = parsedBack.name && parsedBack.nameSpan ? resolveBackward(parsedBack.name, parsedBack.nameSpan, site, ctx.bindings, problems) : undefined;

  let backwardArgs = parsedBack.args ? explicitBackwardArgs(parsedBack, site, paramNames, samples, problems) : defaultBackwardArgs(isMethod, paramNames);

  // The backward's declaration against the call the check will make (only when the tag itself is sound).
  let argsFromNames = false;
  if (
    backTag &&
    resolved?.fn &&
    !site.unsupported &&
    parsedBack.problems.length === 0 &&
    !problems.some((p) => p.start >= backTag.raw.span.start && p.end <= backTag.raw.span.end)
  ) {
    const facts = {
      backwardName,
      backward: resolved.fn,
      forward: site.fn,
      paramNames,
      fieldNames: fieldOrder,
      args: backwardArgs,
      explicit: parsedBack.args !== undefined,
      isMethod,
    };
    const mismatch = backwardSignatureProblem(facts);
    // A default call that does not fit, but whose fix the backward's own parameter names spell out
    // unambiguously, is made that way instead of refused (backwardArgsFromNames).
    const fromNames = mismatch ? backwardArgsFromNames(facts) : undefined;
    if (fromNames) {
      backwardArgs = fromNames;
      argsFromNames = true;
    } else if (mismatch) problems.push({ ...backTag.raw.span, message: mismatch });
  }

  // @gradientField: the backward op's own (reported on the other derivatives only when there is no @backward).
  const gradientFields = readGradientFieldTags(
    ours.filter((t) => t.name === 'gradientField').map((t) => t.raw),
    {
      forward: displayName(site),
      isMethod,
      backward: libraryGradient ? 'library' : backTag ? 'function' : 'none',
      tensors: hasTensors,
      params,
      fixed,
      usesSamplesFactory: samplesTag !== undefined,
    },
    backTag || derivativeTags.length === 0 ? problems : sharedProblems,
  );

  const tags: TagLocation[] = ours.map((t) => {
    const start = ctx.mapper.at(t.raw.span.start);
    const end = ctx.mapper.at(t.raw.span.end);
    const loc: TagLocation = { tag: t.name, line: start.line, column: start.column, endLine: end.line, endColumn: end.column };
    const param = sampleTargets.get(t.raw);
    if (param !== undefined) loc.param = param;
    return loc;
  });

  const op: OpDescriptor = {
    ...opPlace(site, ctx),
    forward: displayName(site),
    backward: libraryGradient ? 'library-gradient' : backwardName,
    target: {
      kind: site.kind,
      forwardName: site.isDefaultExport ? DEFAULT_EXPORT_BINDING : site.name,
      backwardName,
      backwardIsMethod: resolved?.isMethod ?? false,
    },
    params,
    backwardArgs,
    fixed,
    tags,
    problems: problems.sort((a, b) => a.start - b.start).map((p) => ctx.mapper.problem(p)),
  };
  if (argsFromNames) op.backwardArgsFromNames = true;
  if (gradientFields.length > 0) op.gradientFields = gradientFields;
  if (site.className !== undefined) op.target.className = site.className;
  if (site.objectName !== undefined) op.target.objectName = site.objectName;
  if (site.classNode && declaresPrivateMembers(site.classNode, ctx.bindings)) op.target.renewInstance = true;
  if (samplesFactory) op.target.samplesFactory = samplesFactory;
  if (constructFactory) op.target.constructFactory = constructFactory;
  if (libraryGradient) op.target.libraryGradient = true;
  // Any op of a module that imports the library: tensor outputs are read back, and every call
  // runs in the library's scope, so the tensors it makes are disposed.
  const specifier = libraryOf(site).specifier;
  if (specifier) op.target.tensorLibrary = specifier;
  if (tolerance !== undefined) op.tolerance = tolerance;
  if (seed !== undefined) op.seed = seed;
  if (resolved?.span) op.backwardLocation = { file: ctx.fileName, ...ctx.mapper.at(resolved.span.start) };
  if (derivativeTags.length === 0) return [op];

  // One op per further derivative tag: the shared set-up, its own function and argument list.
  const shared = sharedProblems;
  const backwardOk = backTag !== undefined && problems.length === sharedProblems.length;
  const ops: OpDescriptor[] = backTag ? [op] : [];
  const sampledFields = new Set(fieldOrder);
  for (const { kind, tag } of derivativeTags) {
    const own: SpanProblem[] = [];
    const parsed = parseDerivativeTag(tag.raw, kind);
    own.push(...parsed.problems);
    const fnName = parsed.name ?? '';
    const where = parsed.name && parsed.nameSpan ? resolveBackward(parsed.name, parsed.nameSpan, site, ctx.bindings, own, kind) : undefined;
    const args = parsed.args
      ? explicitDerivativeArgs(kind, parsed, { isMethod, forwardName: displayName(site), paramNames, sampledFields, suggest: (n) => suggestName(n, paramNames) }, own)
      : defaultDerivativeArgs(kind, paramNames, params, fixed, samplesFactory !== undefined);
    if (kind === 'hessian') {
      const returns = nonNumberReturn(site.fn?.type);
      if (returns)
        own.push({
          ...(parsed.nameSpan ?? tag.raw.nameSpan),
          message: `@hessian: ${displayName(site)} returns ${returns}; a Hessian needs a forward that returns a number (use @jacobian for a vector output)`,
        });
    }
    const variant: OpDescriptor = {
      ...op,
      kind,
      // The kind is part of the display name, so every surface that names ops (report, editor
      // results, filters, corpus labels) tells this op from the forward's other derivatives.
      forward: `${op.forward} @${kind}`,
      backward: fnName,
      target: { ...op.target, backwardName: fnName, backwardIsMethod: where?.isMethod ?? false },
      backwardArgs: args,
      problems: [...shared, ...own].sort((a, b) => a.start - b.start).map((p) => ctx.mapper.problem(p)),
    };
    delete variant.backwardLocation;
    delete variant.gradientFields;
    if (where?.span) variant.backwardLocation = { file: ctx.fileName, ...ctx.mapper.at(where.span.start) };
    if (kind === 'hessian' && backwardOk) {
      variant.gradient = { name: backwardName, backwardName, backwardIsMethod: resolved?.isMethod ?? false, args: backwardArgs };
      if (gradientFields.length > 0) variant.gradient.gradientFields = gradientFields;
    }
    ops.push(variant);
  }
  return ops;
}
