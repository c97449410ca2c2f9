// The engine's entry inside the sandbox's vm context: defines the one global the runner calls,
// `__gradientProbeRun(exposed, requestJson, realm?)`, returning the outcome as a JSON string.
// Without `realm` the engine and the op share one context; with it the engine runs in a context
// of its own (kept warm across checks) and builds what the op sees from the op context's intrinsics.

import { enterOpRealm, parseJson, reflectApply, stringifyJson, type OpRealm } from './builtins';
import { runCheck, type OpCheckRequest } from './check';

type Clock = () => number;

const g = globalThis as unknown as Record<string, unknown>;

/**
 * The clock for the engine's time budget, captured now, before user code can replace it: the
 * sandbox's own real clock when it provides one (user code there sees a fixed Date), else a
 * `performance`-like global, else Date.now.
 */
const clock: Clock = (() => {
  const provided = g.__gradientProbeClock;
  if (typeof provided === 'function') return provided as Clock;
  const perf = g.performance as { now?: unknown } | undefined;
  if (perf && typeof perf.now === 'function') {
    const now = perf.now;
    return () => reflectApply(now as Clock, perf, []) as number;
  }
  const dateNow = Date.now;
  return () => dateNow();
})();

const REALM_FUNCTIONS = ['Float64Array', 'Float32Array', 'Int32Array', 'Uint8Array', 'parseJson', 'newList', 'newRecord'] as const;

/**
 * The op realm handed in by the op context's setup script (contextSetup.ts), read once into an
 * object of our own: only own data properties holding functions count, so nothing the op's code
 * could have reached runs here as a getter. Undefined when absent or malformed.
 */
function readRealm(realm: unknown): OpRealm | undefined {
  if (realm === null || typeof realm !== 'object') return undefined;
  const out: Record<string, unknown> = {};
  for (let i = 0; i < REALM_FUNCTIONS.length; i++) {
    const d = Object.getOwnPropertyDescriptor(realm, REALM_FUNCTIONS[i]);
    if (!d || !('value' in d) || typeof d.value !== 'function') return undefined;
    out[REALM_FUNCTIONS[i]] = d.value;
  }
  const proto = Object.getOwnPropertyDescriptor(realm, 'objectPrototype');
  if (!proto || !('value' in proto) || proto.value === null || typeof proto.value !== 'object') return undefined;
  out.objectPrototype = proto.value;
  return out as unknown as OpRealm;
}

function run(exposed: unknown, requestJson: string, realm?: unknown): string {
  let request: OpCheckRequest;
  try {
    request = parseJson(requestJson) as OpCheckRequest;
  } catch (e) {
    return stringifyJson({
      verdict: 'error',
      failure: 'internal',
      seed: 0,
      message: `the check request is not valid JSON: ${String(e)}`,
      hints: [],
      params: [],
      calls: { forward: 0, backward: 0 },
    });
  }
  const bindings = exposed !== null && typeof exposed === 'object' ? (exposed as Record<string, unknown>) : {};
  const opRealm = realm === undefined ? undefined : readRealm(realm);
  if (realm !== undefined && opRealm === undefined) {
    return stringifyJson({
      verdict: 'error',
      failure: 'internal',
      seed: 0,
      message: 'internal: the op context handed the engine no usable realm',
      hints: [],
      params: [],
      calls: { forward: 0, backward: 0 },
    });
  }
  enterOpRealm(opRealm ?? null);
  try {
    return stringifyJson(runCheck(bindings, request, clock));
  } finally {
    enterOpRealm(null);
  }
}

Object.defineProperty(g, '__gradientProbeRun', { value: run, writable: false, configurable: false, enumerable: false });
