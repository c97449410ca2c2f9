// A vm context prepared the way the runner prepares one (same setup script, same options, the
// bundle wrapped so built-ins arrive as parameters), holding one op file's bundle, so the
// benchmark's own loops call the very same compiled forward and backward the check calls.
import * as vm from 'node:vm';
import { CONTEXT_BUILTINS, CONTEXT_SETUP_SOURCE, FIXED_DATE_MS } from '../server/src/sandbox/contextSetup';
import { wrapWithBuiltins } from '../server/src/sandbox/bundleWrapper';

/** Console text the context may collect, in characters (the benchmark's ops print nothing). */
const OUTPUT_LIMIT_CHARS = 64 * 1024;

export interface LoadedModule {
  /** The module's exposed bindings (`globalThis.__gradientProbeExposed`). */
  exposed: Record<string, unknown>;
  /** The context's own Float64Array, so inputs live in the same realm as the op. */
  Float64Array: Float64ArrayConstructor;
}

/** Evaluates a bundle (from the project's Bundler) in a fresh context like the runner's. */
export function loadInContext(bundleCode: string, seed: number): LoadedModule {
  const context = vm.createContext(Object.create(null), {
    name: 'benchmark op',
    codeGeneration: { strings: false, wasm: false },
    microtaskMode: 'afterEvaluate',
  });
  const setup = new vm.Script(CONTEXT_SETUP_SOURCE).runInContext(context) as (seed: number, now: number, limit: number) => void;
  setup(seed, FIXED_DATE_MS, OUTPUT_LIMIT_CHARS);
  const builtinsSource = `[${CONTEXT_BUILTINS.map((n) => (n === 'globalThis' ? 'globalThis' : `globalThis.${n}`)).join(', ')}]`;
  const builtins = new vm.Script(builtinsSource).runInContext(context) as unknown[];
  const moduleFn = new vm.Script(wrapWithBuiltins(bundleCode), { filename: 'bench-bundle.js' }).runInContext(context) as (...a: unknown[]) => void;
  const global = context as Record<string, unknown>;
  Reflect.apply(moduleFn, global, builtins);
  const exposed = global.__gradientProbeExposed as Record<string, unknown> | undefined;
  if (!exposed) throw new Error('the bundle did not expose its bindings');
  return { exposed, Float64Array: builtins[CONTEXT_BUILTINS.indexOf('Float64Array')] as Float64ArrayConstructor };
}
