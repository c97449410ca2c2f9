// The engine's entry inside the sandbox's vm context: defines the one global the runner calls,
// `__gradientProbeRun(exposed, requestJson)`, returning the outcome as a JSON string.

import { parseJson, reflectApply, stringifyJson } from './builtins';
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

function run(exposed: unknown, requestJson: string): string {
  let request: OpCheckRequest;
  try {
    request = parseJson(requestJson) as OpCheckRequest;
  } catch (e) {
    return stringifyJson({
      verdict: 'error', failure: 'internal', seed: 0, message: `the check request is not valid JSON: ${String(e)}`, hints: [], params: [], calls: { forward: 0, backward: 0 },
    });
  }
  const bindings = exposed !== null && typeof exposed === 'object' ? (exposed as Record<string, unknown>) : {};
  return stringifyJson(runCheck(bindings, request, clock));
}

Object.defineProperty(g, '__gradientProbeRun', { value: run, writable: false, configurable: false, enumerable: false });
