// The built-ins every context hands to the engine and the user bundle as parameters
// (bundleWrapper.ts), in the order the wrapper declares them.

/**
 * Built-ins handed to the engine and the user bundle as function parameters. Global lookups in a
 * vm context go through an interceptor and cost 2–12× on numeric loops (measured during the
 * sandbox's design; bench/sandbox.ts times it); parameters are plain local variables. `Infinity`, `NaN` and
 * `undefined` are global lookups too: one `-Infinity` in the engine's per-element comparison
 * made it 4–5× slower in a context than in the host (bench/PERFORMANCE.md).
 */
export const CONTEXT_BUILTINS = [
  'globalThis',
  'Infinity',
  'NaN',
  'undefined',
  'Math',
  'Object',
  'Array',
  'Number',
  'String',
  'Boolean',
  'Symbol',
  'BigInt',
  'Function',
  'JSON',
  'Reflect',
  'Proxy',
  'Promise',
  'Map',
  'Set',
  'WeakMap',
  'WeakSet',
  'Date',
  'RegExp',
  'Error',
  'TypeError',
  'RangeError',
  'SyntaxError',
  'ReferenceError',
  'EvalError',
  'URIError',
  'AggregateError',
  'ArrayBuffer',
  'DataView',
  'Float64Array',
  'Float32Array',
  'Int32Array',
  'Uint32Array',
  'Int16Array',
  'Uint16Array',
  'Int8Array',
  'Uint8Array',
  'Uint8ClampedArray',
  'BigInt64Array',
  'BigUint64Array',
  'isFinite',
  'isNaN',
  'parseFloat',
  'parseInt',
  'console',
] as const;
