// Our tag names, the ordinary JSDoc/TSDoc tags we leave alone, and the rule that decides when
// an unknown tag is a misspelling of ours (flagged with "did you mean").
import { editDistance } from '../text/nearestName';

/** Every tag Gradient Probe reads (docs/annotations.md). */
export const OP_TAG_NAMES = ['backward', 'sample', 'samples', 'fixed', 'construct', 'tolerance', 'seed', 'jacobian', 'tangent', 'hessian', 'gradientField'] as const;
export type OpTagName = (typeof OP_TAG_NAMES)[number];

/**
 * Tags of JSDoc 3 and TSDoc (and a few common in TypeScript code) that are never ours, even
 * when close in spelling (`@see`/`@seed`, `@example`/`@sample`, `@sealed`/`@seed`).
 */
const STANDARD_DOC_TAGS = new Set([
  'abstract',
  'access',
  'alias',
  'alpha',
  'arg',
  'argument',
  'async',
  'augments',
  'author',
  'beta',
  'borrows',
  'callback',
  'category',
  'class',
  'classdesc',
  'const',
  'constant',
  'constructor',
  'constructs',
  'copyright',
  'default',
  'defaultvalue',
  'deprecated',
  'desc',
  'description',
  'emits',
  'enum',
  'event',
  'eventproperty',
  'example',
  'exception',
  'experimental',
  'exports',
  'extends',
  'external',
  'file',
  'fileoverview',
  'fires',
  'func',
  'function',
  'generator',
  'global',
  'group',
  'hidden',
  'hideconstructor',
  'host',
  'ignore',
  'implements',
  'import',
  'inheritdoc',
  'inner',
  'instance',
  'interface',
  'internal',
  'kind',
  'label',
  'lends',
  'license',
  'link',
  'linkcode',
  'linkplain',
  'listens',
  'member',
  'memberof',
  'method',
  'mixes',
  'mixin',
  'module',
  'name',
  'namespace',
  'override',
  'overload',
  'overview',
  'package',
  'packagedocumentation',
  'param',
  'private',
  'privateremarks',
  'prop',
  'property',
  'protected',
  'public',
  'readonly',
  'remarks',
  'requires',
  'return',
  'returns',
  'satisfies',
  'sealed',
  'see',
  'since',
  'static',
  'summary',
  'template',
  'this',
  'throws',
  'todo',
  'tutorial',
  'type',
  'typedef',
  'typeparam',
  'variation',
  'version',
  'virtual',
  'yield',
  'yields',
]);

/**
 * Largest edit distance (with transpositions) at which an unknown tag counts as a misspelling
 * of one of ours: 1 for our short names (`seed`, `fixed`), 2 for the longer ones. Our own
 * choice, tuned so `@sampel`, `@tolerence`, `@bakward` are caught and `@fixme` is not.
 */
const SHORT_TAG_LENGTH = 5;
const MAX_DISTANCE_SHORT = 1;
const MAX_DISTANCE_LONG = 2;

export type TagClass = { kind: 'ours'; name: OpTagName } | { kind: 'misspelled'; suggestion: OpTagName } | { kind: 'other' };

/**
 * Decides what a tag name is. Ours: exactly one of OP_TAG_NAMES. Misspelled: not a standard
 * doc tag, and either ours in another letter case, ours with letters added at the end
 * (`@backwards`, `@seeds`), or within a small edit distance of ours. Everything else: other.
 */
export function classifyTag(name: string): TagClass {
  const exact = OP_TAG_NAMES.find((t) => t === name);
  if (exact) return { kind: 'ours', name: exact };
  const lower = name.toLowerCase();
  if (STANDARD_DOC_TAGS.has(lower)) return { kind: 'other' };
  // Compared in lower case: `@gradientfield` is `@gradientField` misspelt.
  const sameLetters = OP_TAG_NAMES.find((t) => t.toLowerCase() === lower);
  if (sameLetters) return { kind: 'misspelled', suggestion: sameLetters };
  // Longest of ours first, so `@samplesx` suggests `samples` rather than `sample`.
  const byLength = [...OP_TAG_NAMES].sort((a, b) => b.length - a.length);
  const prefixed = byLength.find((t) => lower.startsWith(t.toLowerCase()));
  if (prefixed) return { kind: 'misspelled', suggestion: prefixed };
  let best: { name: OpTagName; distance: number } | undefined;
  for (const t of OP_TAG_NAMES) {
    const limit = t.length <= SHORT_TAG_LENGTH ? MAX_DISTANCE_SHORT : MAX_DISTANCE_LONG;
    const d = editDistance(lower, t.toLowerCase());
    if (d <= limit && (!best || d < best.distance)) best = { name: t, distance: d };
  }
  return best ? { kind: 'misspelled', suggestion: best.name } : { kind: 'other' };
}
