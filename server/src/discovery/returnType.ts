// Reads a forward's declared return type just far enough to know whether it is certainly not a
// number (an array, typed array or object), without a type checker.
import ts from 'typescript';

/** Built-in names whose values are arrays or objects, never a plain number. */
const NON_NUMBER_TYPE_NAMES = new Set([
  'Array',
  'ReadonlyArray',
  'Float64Array',
  'Float32Array',
  'Int8Array',
  'Int16Array',
  'Int32Array',
  'Uint8Array',
  'Uint8ClampedArray',
  'Uint16Array',
  'Uint32Array',
  'BigInt64Array',
  'BigUint64Array',
  'Record',
  'Map',
  'Set',
  'Readonly',
  'Partial',
]);

/**
 * A short description of the declared type when it is certainly not a number
 * ('Float64Array', 'number[]', 'an object'), or undefined when it is a number or unknown here
 * (a type alias declared elsewhere: the engine then checks the value at run time).
 */
export function nonNumberReturn(type: ts.TypeNode | undefined): string | undefined {
  if (!type) return undefined;
  if (ts.isParenthesizedTypeNode(type)) return nonNumberReturn(type.type);
  if (ts.isTypeOperatorNode(type) && type.operator === ts.SyntaxKind.ReadonlyKeyword) return nonNumberReturn(type.type);
  if (ts.isArrayTypeNode(type) || ts.isTupleTypeNode(type)) return `'${type.getText()}'`;
  if (ts.isTypeLiteralNode(type) || ts.isMappedTypeNode(type)) return 'an object';
  if (ts.isTypeReferenceNode(type) && ts.isIdentifier(type.typeName) && NON_NUMBER_TYPE_NAMES.has(type.typeName.text)) return `'${type.getText()}'`;
  if (ts.isUnionTypeNode(type)) {
    const parts = type.types.filter((t) => t.kind !== ts.SyntaxKind.UndefinedKeyword && !(ts.isLiteralTypeNode(t) && t.literal.kind === ts.SyntaxKind.NullKeyword));
    if (parts.length > 0 && parts.every((t) => nonNumberReturn(t) !== undefined)) return `'${type.getText()}'`;
  }
  return undefined;
}
