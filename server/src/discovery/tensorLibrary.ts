// Recognises TensorFlow.js in one module without a type checker: which import brings the
// library, which parameter types are its tensors, which consts hold a `customGrad` result, and
// the `@backward library-gradient` spelling (with its near misses).
import ts from 'typescript';
import { unwrapExpression } from './moduleBindings';
import { editDistance } from '../text/nearestName';

/** Packages whose namespace has `tensor`, `tidy` and `grads` (the union package, its core, the Node bindings). */
const TENSOR_LIBRARY_MODULE = /^@tensorflow\/tfjs(?:-core|-node|-node-gpu)?$/;

/** Tensor types a parameter may be declared with (`Variable` is left out: it needs `assign`). */
const TENSOR_TYPE_NAME = /^(?:Tensor(?:[1-6]D)?|Scalar)$/;

/** The type of the save function `customGrad` passes last. */
const SAVE_FUNCTION_TYPE = 'GradSaveFunc';

/** The word after `@backward` that asks for the library's own gradient of the forward. */
export const LIBRARY_GRADIENT = 'library-gradient';

export interface TensorLibraryImports {
  /** The first TensorFlow.js module the file imports (at run time or for types), if any. */
  specifier?: string;
  /** Local names bound to the whole library (`import * as tf`, `import tf from`). */
  namespaces: Set<string>;
  /** Local names of imported tensor types (`import { Tensor2D as T }` gives `T`). */
  tensorTypes: Set<string>;
  /** Local names of imported `GradSaveFunc`. */
  saveTypes: Set<string>;
  /** Local names of an imported `customGrad`. */
  customGrads: Set<string>;
}

export function tensorLibraryImports(sf: ts.SourceFile): TensorLibraryImports {
  const lib: TensorLibraryImports = { namespaces: new Set(), tensorTypes: new Set(), saveTypes: new Set(), customGrads: new Set() };
  for (const st of sf.statements) {
    if (!ts.isImportDeclaration(st) || !ts.isStringLiteral(st.moduleSpecifier) || !TENSOR_LIBRARY_MODULE.test(st.moduleSpecifier.text)) continue;
    lib.specifier ??= st.moduleSpecifier.text;
    const clause = st.importClause;
    if (!clause) continue;
    if (clause.name) lib.namespaces.add(clause.name.text);
    const nb = clause.namedBindings;
    if (nb && ts.isNamespaceImport(nb)) lib.namespaces.add(nb.name.text);
    else if (nb) {
      for (const el of nb.elements) {
        const imported = (el.propertyName ?? el.name).text;
        if (TENSOR_TYPE_NAME.test(imported)) lib.tensorTypes.add(el.name.text);
        else if (imported === SAVE_FUNCTION_TYPE) lib.saveTypes.add(el.name.text);
        else if (imported === 'customGrad') lib.customGrads.add(el.name.text);
      }
    }
  }
  return lib;
}

/** `tf.NAME` with `tf` a namespace of the library, or a name imported from it, matching the test. */
function namesLibraryType(type: ts.TypeNode | undefined, lib: TensorLibraryImports, imported: Set<string>, name: (text: string) => boolean): boolean {
  if (!type || !ts.isTypeReferenceNode(type)) return false;
  const n = type.typeName;
  if (ts.isIdentifier(n)) return imported.has(n.text);
  return ts.isIdentifier(n.left) && lib.namespaces.has(n.left.text) && name(n.right.text);
}

/** Whether a declared parameter type is a tensor of the library (`tf.Tensor2D`, `Tensor`, `Tensor<Rank.R1>`). */
export function isTensorType(type: ts.TypeNode | undefined, lib: TensorLibraryImports): boolean {
  return namesLibraryType(type, lib, lib.tensorTypes, (t) => TENSOR_TYPE_NAME.test(t));
}

/** Whether a declared parameter type is the library's save function type. */
export function isSaveFunctionType(type: ts.TypeNode | undefined, lib: TensorLibraryImports): boolean {
  return namesLibraryType(type, lib, lib.saveTypes, (t) => t === SAVE_FUNCTION_TYPE);
}

/**
 * The function given to `tf.customGrad(fn)` (or an imported `customGrad(fn)`) when `init` is
 * such a call with a function written in place; otherwise undefined.
 */
export function customGradFunction(init: ts.Expression, lib: TensorLibraryImports): ts.ArrowFunction | ts.FunctionExpression | undefined {
  if (!ts.isCallExpression(init)) return undefined;
  const callee = init.expression;
  const named =
    (ts.isIdentifier(callee) && lib.customGrads.has(callee.text)) ||
    (ts.isPropertyAccessExpression(callee) && ts.isIdentifier(callee.expression) && lib.namespaces.has(callee.expression.text) && callee.name.text === 'customGrad');
  const first = init.arguments[0];
  // `customGrad(((x: Tensor, save: GradSaveFunc) => ...) as CustomGradientFunc<Tensor>)` too.
  const fn = first && unwrapExpression(first);
  if (!named || !fn || !(ts.isArrowFunction(fn) || ts.isFunctionExpression(fn))) return undefined;
  return fn;
}

/**
 * Whether a body written after `@backward` is a near miss of `library-gradient`
 * (`library`, `libraryGradient`, `library_gradients`, `lib-gradient`, `tf.grads`, ...).
 * Compared without case and punctuation; our own threshold.
 */
export function nearLibraryGradient(body: string): boolean {
  const letters = body.toLowerCase().replace(/[^a-z]/g, '');
  if (letters === '' || body.trim() === LIBRARY_GRADIENT) return false;
  if (['library', 'lib', 'tfgrad', 'tfgrads', 'grads', 'autodiff', 'librarygrad', 'libgrad'].includes(letters)) return true;
  return editDistance(letters, 'librarygradient') <= 3;
}
