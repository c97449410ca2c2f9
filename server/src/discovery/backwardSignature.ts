// Compares the parameters a backward declares with the call the check will make (count, names
// that match forward parameters, declared TypeScript types), before anything runs, so a wrong
// argument order is reported at the @backward tag with the call spelled out and the fix.
import ts from 'typescript';
import type { BackwardArg } from '../model/types';
import { nonNumberReturn } from './returnType';

/** Names people give an upstream gradient (common practice in hand-written layers). */
const UPSTREAM_NAME = /^(d_?y|d_?out(put)?s?|dl_?d_?y|grad(_?out(put)?s?|_?y|_?upstream)?|gradients?|g_?y|g_?out|upstream(_?grad(ient)?)?|out_?grad|delta|d_?loss)$/i;
/** Names people give the forward's output in a backward. */
const OUTPUT_NAME = /^(y|out|output|result|y_?hat|activation)$/i;

/** What one declared backward parameter most likely receives. */
type Role = { kind: 'param'; name: string } | { kind: 'upstream' } | { kind: 'output' } | { kind: 'unknown' };

/** Rough kind of a declared type: enough to see a number passed where an array is declared. */
type TypeKind = 'number' | 'array' | 'unknown';

export interface SignatureFacts {
  backwardName: string;
  /** The backward's declaration (parameters and their types). */
  backward: ts.SignatureDeclaration;
  /** The forward's declaration, for parameter and return types. */
  forward: ts.SignatureDeclaration | undefined;
  /** Forward parameter names in order. */
  paramNames: readonly string[];
  /** `this.FIELD` names with a @sample (with the prefix). */
  fieldNames: readonly string[];
  /** The call the check will make. */
  args: readonly BackwardArg[];
  /** Whether the list was written in the tag (else the default applies). */
  explicit: boolean;
  isMethod: boolean;
}

/** How an argument of the backward's call is written in a tag's list (`x`, `this.w`, `$y`, `$dy`, `$v`, `$dNAME`). */
export function backwardArgText(a: BackwardArg): string {
  return a.kind === 'param' ? a.name : a.kind === 'output' ? '$y' : a.kind === 'upstream' ? '$dy' : a.kind === 'vector' ? '$v' : `$d${a.name}`;
}

function roleOf(name: string | undefined, facts: SignatureFacts): Role {
  if (name === undefined) return { kind: 'unknown' };
  if (facts.paramNames.includes(name)) return { kind: 'param', name };
  if (facts.fieldNames.includes(`this.${name}`)) return { kind: 'param', name: `this.${name}` };
  if (UPSTREAM_NAME.test(name)) return { kind: 'upstream' };
  if (OUTPUT_NAME.test(name)) return { kind: 'output' };
  return { kind: 'unknown' };
}

function roleText(r: Role): string {
  return r.kind === 'param' ? r.name : r.kind === 'output' ? '$y' : r.kind === 'upstream' ? '$dy' : '?';
}

function sameRole(r: Role, a: BackwardArg): boolean {
  // `y`/`out` may well name an input too: an output-like name alone never makes a problem.
  if (r.kind === 'unknown' || r.kind === 'output') return true;
  if (r.kind === 'param') return a.kind === 'param' && a.name === r.name;
  return r.kind === a.kind;
}

function typeKind(node: ts.TypeNode | undefined): TypeKind {
  if (!node) return 'unknown';
  if (node.kind === ts.SyntaxKind.NumberKeyword) return 'number';
  if (ts.isArrayTypeNode(node) || ts.isTupleTypeNode(node)) return 'array';
  if (ts.isTypeReferenceNode(node) && ts.isIdentifier(node.typeName)) {
    const n = node.typeName.text;
    if (/^(Float64Array|Float32Array|Int32Array|Array|ReadonlyArray)$/.test(n)) return 'array';
  }
  if (ts.isTypeOperatorNode(node) && node.operator === ts.SyntaxKind.ReadonlyKeyword) return typeKind(node.type);
  return 'unknown';
}

/** The declared type kind of what the check passes for one argument. */
function passedKind(a: BackwardArg, facts: SignatureFacts): TypeKind {
  const fwd = facts.forward;
  if (!fwd) return 'unknown';
  if (a.kind === 'param') {
    const p = fwd.parameters.find((q) => ts.isIdentifier(q.name) && q.name.text === a.name);
    return typeKind(p?.type);
  }
  return typeKind(fwd.type);
}

/** Declared parameters of a function, without TypeScript's `this` parameter. */
function declaredParams(fn: ts.SignatureDeclaration): ts.ParameterDeclaration[] {
  return fn.parameters.filter((p) => !(ts.isIdentifier(p.name) && p.name.text === 'this'));
}

/**
 * Why the backward's declaration does not fit the call the check will make, with the call and
 * the fix spelled out; undefined when it fits or cannot be judged.
 */
export function backwardSignatureProblem(facts: SignatureFacts): string | undefined {
  const declared = declaredParams(facts.backward);
  // A rest parameter takes any count; a backward declaring none may read `arguments` (or is a stub).
  if (declared.length === 0 || declared.some((p) => p.dotDotDotToken)) return undefined;
  const required = declared.filter((p) => !p.questionToken && !p.initializer).length;
  const names = declared.map((p) => (ts.isIdentifier(p.name) ? p.name.text : undefined));
  const roles = names.map((n) => roleOf(n, facts));
  const args = facts.args;

  let why: string | undefined;
  if (args.length < required) {
    why = `it declares ${required} required parameter${required === 1 ? '' : 's'} but would receive ${args.length}`;
  } else if (args.length > declared.length) {
    why = `it declares ${declared.length} parameter${declared.length === 1 ? '' : 's'} but would receive ${args.length}, so '${backwardArgText(args[declared.length]!)}' would be dropped`;
  } else {
    for (let i = 0; i < args.length && !why; i++) {
      const r = roles[i]!;
      if (!sameRole(r, args[i]!)) why = `its parameter ${i + 1} is '${names[i]}', which looks like ${describeRole(r)}, but the check passes '${backwardArgText(args[i]!)}' there`;
    }
    for (let i = 0; i < args.length && !why; i++) {
      const want = typeKind(declared[i]!.type);
      const got = passedKind(args[i]!, facts);
      if (want !== 'unknown' && got !== 'unknown' && want !== got) {
        why = `its parameter ${i + 1} ('${names[i] ?? declared[i]!.name.getText()}') is declared ${want === 'number' ? 'a number' : 'an array'}, but '${backwardArgText(args[i]!)}' is ${got === 'number' ? 'a number' : 'an array'}`;
      }
    }
  }
  if (!why) return undefined;

  const call = `${facts.backwardName}(${args.map(backwardArgText).join(', ')})`;
  const rule = facts.explicit
    ? 'as the @backward list says'
    : facts.isMethod
      ? 'the default for a method: `$dy` alone'
      : 'the default for a function: every forward parameter, then `$dy`';
  const declaredText = `(${declared.map((p) => p.name.getText()).join(', ')})`;
  const canSuggest = roles.length > 0 && roles.every((r) => r.kind !== 'unknown') && new Set(roles.map(roleText)).size === roles.length;
  const fix = canSuggest
    ? `write the list it expects: \`@backward ${facts.backwardName}(${roles.map(roleText).join(', ')})\``
    : `declare the backward to take exactly those arguments, or write the list it expects as \`@backward ${facts.backwardName}(ARG, ...)\` from forward parameter names, this.FIELD, $y and $dy`;
  return `@backward: the check will call ${call} (${rule}), but ${facts.backwardName} declares ${declaredText}: ${why}; ${fix}`;
}

function describeRole(r: Role): string {
  if (r.kind === 'param') return `the forward's '${r.name}'`;
  if (r.kind === 'upstream') return 'the upstream gradient ($dy)';
  return "the forward's output ($y)";
}

/**
 * The call read from the backward's own parameter names, for a tag without a list whose default
 * call does not fit: every declared parameter is a forward parameter, a sampled `this.FIELD` or
 * an upstream-gradient name (`dy`, `grad`, ...), each once. So `layerNormBackward(x, dy, eps)`
 * is called as `(x, $dy, eps)` and a loss's `peakGrad(a, mu, sigma)` as `(a, mu, sigma)`, the
 * list the problem message would otherwise ask for. Output-like names (`y`, `out`) are never
 * read this way (they may name an input too), and a list without `$dy` is not read for a forward
 * declared to return an array or object (without `$dy` the forward must return a number).
 */
export function backwardArgsFromNames(facts: SignatureFacts): BackwardArg[] | undefined {
  if (facts.explicit) return undefined;
  const declared = declaredParams(facts.backward);
  if (declared.length === 0 || declared.some((p) => p.dotDotDotToken || !ts.isIdentifier(p.name))) return undefined;
  const roles = declared.map((p) => roleOf((p.name as ts.Identifier).text, facts));
  if (!roles.every((r) => r.kind === 'param' || r.kind === 'upstream')) return undefined;
  if (new Set(roles.map(roleText)).size !== roles.length) return undefined;
  const args = roles.map((r): BackwardArg => (r.kind === 'param' ? { kind: 'param', name: r.name } : { kind: 'upstream' }));
  if (!args.some((a) => a.kind === 'upstream') && nonNumberReturn(facts.forward?.type) !== undefined) return undefined;
  return args;
}
