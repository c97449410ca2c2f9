// Guesses a `@sample` spec from a parameter's TypeScript type (and its default value or field
// initializer): `Float64Array` → `f64[8]`, `number[][]` → `num[4, 4]`, `[number, number]` →
// `num[2]`, `number` → `num`. Dimensions come from the code where it states them (tuples,
// `new Float64Array(6)`, array literals); otherwise they are placeholders the user edits.

import ts from 'typescript';

/** Placeholder sizes when the type does not say (our choice: small enough to check fast). */
export const GUESS_LENGTH = 8;
export const GUESS_SIDE = 4;

export interface SpecGuess {
  /** The spec text, e.g. `f64[8]`. */
  spec: string;
  /** Element type and dimensions, for a snippet with the dimensions as placeholders. */
  dtype: string;
  dims: number[];
  /** Whether the dimensions come from the code (true) or are placeholders (false). */
  sized: boolean;
}

function guess(dtype: string, dims: number[], sized: boolean): SpecGuess {
  return { spec: dims.length === 0 ? dtype : `${dtype}[${dims.join(', ')}]`, dtype, dims, sized };
}

const TYPED_ARRAYS: Record<string, string> = { Float64Array: 'f64', Float32Array: 'f32', Int32Array: 'i32' };

/** The spec a parameter of this type and initial value would be drawn with, or undefined if not numeric. */
export function specFromType(type: ts.TypeNode | undefined, initializer?: ts.Expression): SpecGuess | undefined {
  const fromInit = initializer ? specFromValue(initializer) : undefined;
  if (!type) return fromInit;
  const fromType = specFromTypeNode(type);
  if (!fromType) return undefined;
  // The initializer knows sizes the type does not (`w: Float64Array = new Float64Array(6)`).
  if (fromInit && !fromType.sized && fromInit.dtype === fromType.dtype && fromInit.dims.length === fromType.dims.length) return fromInit;
  return fromType;
}

function specFromTypeNode(type: ts.TypeNode): SpecGuess | undefined {
  if (type.kind === ts.SyntaxKind.NumberKeyword) return guess('num', [], true);
  if (ts.isParenthesizedTypeNode(type)) return specFromTypeNode(type.type);
  if (ts.isTypeOperatorNode(type) && type.operator === ts.SyntaxKind.ReadonlyKeyword) return specFromTypeNode(type.type);
  if (ts.isTypeReferenceNode(type) && ts.isIdentifier(type.typeName)) {
    const name = type.typeName.text;
    if (TYPED_ARRAYS[name]) return guess(TYPED_ARRAYS[name], [GUESS_LENGTH], false);
    if ((name === 'Array' || name === 'ReadonlyArray') && type.typeArguments?.length === 1) return nested(specFromTypeNode(type.typeArguments[0]!), undefined);
    return undefined;
  }
  if (ts.isArrayTypeNode(type)) return nested(specFromTypeNode(type.elementType), undefined);
  if (ts.isTupleTypeNode(type) && type.elements.length > 0) {
    const inner = type.elements.map((e) => specFromTypeNode(ts.isNamedTupleMember(e) ? e.type : e));
    const first = inner[0];
    if (!first || inner.some((g) => !g || g.spec !== first.spec)) return undefined;
    return nested(first, type.elements.length);
  }
  return undefined;
}

/** One more leading dimension over a number-array element guess (`number[]` of `number[]`). */
function nested(inner: SpecGuess | undefined, length: number | undefined): SpecGuess | undefined {
  if (!inner || inner.dtype !== 'num') return undefined;
  const size = length ?? (inner.dims.length === 0 ? GUESS_LENGTH : GUESS_SIDE);
  // A 2-D placeholder is square and small: [4, 4] rather than [8, 8].
  const dims = [size, ...inner.dims.map((d, i) => (!inner.sized && i === 0 && length === undefined ? GUESS_SIDE : d))];
  return guess('num', dims, length !== undefined && inner.sized);
}

/** From a value: `0.5` → num, `new Float64Array(6)` → f64[6], `[1, 2, 3]` → num[3]. */
function specFromValue(e: ts.Expression): SpecGuess | undefined {
  if (ts.isNumericLiteral(e) || (ts.isPrefixUnaryExpression(e) && ts.isNumericLiteral(e.operand))) return guess('num', [], true);
  if (ts.isNewExpression(e) && ts.isIdentifier(e.expression) && TYPED_ARRAYS[e.expression.text]) {
    const arg = e.arguments?.[0];
    const dtype = TYPED_ARRAYS[e.expression.text]!;
    if (arg && ts.isNumericLiteral(arg)) return guess(dtype, [Number(arg.text)], true);
    if (arg && ts.isArrayLiteralExpression(arg)) return guess(dtype, [arg.elements.length], true);
    return guess(dtype, [GUESS_LENGTH], false);
  }
  if (ts.isArrayLiteralExpression(e) && e.elements.length > 0) {
    const inner = e.elements.map((x) => specFromValue(x));
    const first = inner[0];
    if (!first || inner.some((g) => !g || g.spec !== first.spec)) return undefined;
    return nested(first, e.elements.length);
  }
  return undefined;
}

/** The guess as a snippet whose dimensions are tab stops: `f64[${1:8}]`. */
export function specSnippet(g: SpecGuess): string {
  if (g.dims.length === 0) return g.dtype;
  return `${g.dtype}[${g.dims.map((d, i) => `\${${i + 1}:${d}}`).join(', ')}]`;
}
