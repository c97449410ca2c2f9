// Source text of the script that prepares each fresh vm context before any user code runs:
// it removes globals no op needs, seeds Math.random, fixes the clock, installs a console that
// collects text, gives TensorFlow.js a platform (tensorPlatform.ts), and defines the driver the
// runner process calls (load, then check).
// Everything here is evaluated INSIDE the context, so every object it creates belongs to the
// context: no host function ever becomes reachable from user code.

import { CONTEXT_BUILTINS } from './contextBuiltins';
import { TENSOR_LIBRARY_PLATFORM_SOURCE } from './tensorPlatform';

export { CONTEXT_BUILTINS } from './contextBuiltins';

/**
 * The clock value every op sees through `Date.now()` and `new Date()`: 2021-06-01T00:00:00Z, an
 * arbitrary fixed instant, so an op that reads the clock behaves the same on every run.
 */
export const FIXED_DATE_MS = 1622505600000;

/**
 * Evaluates to a function `(seed, fixedNow, outputLimit, engineContext) => arm`, where
 * `arm(seed, outputLimit)` re-seeds Math.random and sets the console limit for the job about to
 * run (so a context can be prepared ahead, before its job is known). After it ran, the context has
 * `__gradientProbeDrive()` (loads engine and module, runs the check, returns a tagged string:
 * 'R' + outcome JSON, 'L' + bundle frames + '|' + load error, 'E' + engine failure), the same in
 * two steps (`__gradientProbeLoad()`, '' when the check may follow, then `__gradientProbeCheck()`),
 * and `__gradientProbeOutput()`
 * (the console text), both non-writable. The host puts the wrapped engine, the wrapped module
 * and the request JSON in `__gradientProbeEngine`, `__gradientProbeModule`,
 * `__gradientProbeRequest` before calling the driver; the driver removes them first.
 */
export const CONTEXT_SETUP_SOURCE = String.raw`(function (seed, fixedNow, outputLimit, engineContext) {
  'use strict';
  const g = globalThis;
  const BUILTIN_NAMES = ${JSON.stringify(CONTEXT_BUILTINS)};
  // Shared memory, blocking waits and WebAssembly are not needed by any op and escape the
  // limits we set (Atomics.wait blocks outside the vm timeout's reach of promise jobs; wasm
  // memory is not on the JS heap). Code generation from strings is off by context option.
  for (const name of ['WebAssembly', 'SharedArrayBuffer', 'Atomics', 'console']) {
    try { delete g[name]; } catch (e) { /* non-configurable: leave it */ }
  }

  // Packages written for browsers and workers look for the global object under 'self'.
  Object.defineProperty(g, 'self', { value: g, writable: true, configurable: true });

  // Seeded Math.random: mulberry32, a 32-bit generator (public domain, T. Ettinger), so two
  // runs of the same op with the same seed see the same numbers.
  let state = (seed >>> 0) ^ 0x9e3779b9;
  const random = function random() {
    state = (state + 0x6d2b79f5) | 0;
    let t = Math.imul(state ^ (state >>> 15), 1 | state);
    t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t;
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  Object.defineProperty(Math, 'random', { value: random, writable: true, configurable: true });

  // A fixed clock for user code; the engine keeps the real one for its own time budget.
  const RealDate = Date;
  const realNow = RealDate.now;
  const FixedDate = function Date(...args) {
    if (new.target === undefined) return new RealDate(fixedNow).toString();
    return Reflect.construct(RealDate, args.length === 0 ? [fixedNow] : args, new.target);
  };
  FixedDate.prototype = RealDate.prototype;
  FixedDate.now = function now() { return fixedNow; };
  FixedDate.UTC = RealDate.UTC;
  FixedDate.parse = RealDate.parse;
  Object.defineProperty(RealDate.prototype, 'constructor', { value: FixedDate, writable: true, configurable: true });
  Object.defineProperty(g, 'Date', { value: FixedDate, writable: true, configurable: true });
  Object.defineProperty(g, '__gradientProbeClock', { value: function clock() { return realNow(); }, writable: false, configurable: false });

  // Console text is collected per op, up to outputLimit characters, and never printed.
  // One string, not an array of chunks: reading it back calls no method user code could replace
  // (the runner reads it without a time limit, runner/child.ts).
  let text = '';
  let used = 0;
  let truncated = false;
  const show = (v, depth) => {
    if (typeof v === 'string') return depth === 0 ? v : JSON.stringify(v);
    if (typeof v === 'number' || typeof v === 'boolean' || typeof v === 'undefined' || v === null) return String(v);
    if (typeof v === 'bigint') return String(v) + 'n';
    if (typeof v === 'symbol') return v.toString();
    if (typeof v === 'function') return '[function ' + (v.name || 'anonymous') + ']';
    if (v instanceof Error) return (v.name || 'Error') + ': ' + v.message;
    if (ArrayBuffer.isView(v) && !(v instanceof DataView)) {
      const n = v.length;
      const head = Array.prototype.slice.call(v, 0, 20).map((x) => String(x)).join(', ');
      return v.constructor.name + '(' + n + ') [' + head + (n > 20 ? ', …' : '') + ']';
    }
    if (depth >= 2) return Array.isArray(v) ? '[Array]' : '[Object]';
    if (Array.isArray(v)) {
      const items = v.slice(0, 20).map((x) => show(x, depth + 1));
      return '[' + items.join(', ') + (v.length > 20 ? ', …' : '') + ']';
    }
    const keys = Object.keys(v).slice(0, 20);
    return '{ ' + keys.map((k) => k + ': ' + show(v[k], depth + 1)).join(', ') + ' }';
  };
  const write = (prefix, args) => {
    if (truncated) return;
    let line = prefix;
    for (let i = 0; i < args.length; i++) {
      let piece;
      try { piece = show(args[i], 0); } catch (e) { piece = '[unprintable]'; }
      line += (i > 0 ? ' ' : '') + piece;
    }
    line += '\n';
    if (used + line.length > outputLimit) {
      text += line.slice(0, Math.max(0, outputLimit - used)) + '\n… output truncated at ' + outputLimit + ' characters\n';
      truncated = true;
      return;
    }
    used += line.length;
    text += line;
  };
  const counts = new Map();
  const consoleObject = {
    log(...a) { write('', a); },
    info(...a) { write('', a); },
    debug(...a) { write('', a); },
    warn(...a) { write('warn: ', a); },
    error(...a) { write('error: ', a); },
    trace(...a) { write('trace: ', a); },
    dir(v) { write('', [v]); },
    table(v) { write('', [v]); },
    assert(ok, ...a) { if (!ok) write('assertion failed: ', a); },
    count(label = 'default') { const n = (counts.get(label) || 0) + 1; counts.set(label, n); write('', [label + ': ' + n]); },
    group(...a) { if (a.length) write('', a); },
    groupEnd() {},
    time() {},
    timeEnd() {},
  };
  Object.defineProperty(g, 'console', { value: consoleObject, writable: true, configurable: true });
  Object.defineProperty(g, '__gradientProbeOutput', {
    value: function output() { return text; }, writable: false, configurable: false,
  });

  ${TENSOR_LIBRARY_PLATFORM_SOURCE}

  // Captured now, before user code can replace any of them.
  const builtins = BUILTIN_NAMES.map((name) => (name === 'globalThis' ? g : g[name]));
  const apply = Reflect.apply;
  const describe = (e) => {
    try {
      if (e !== null && typeof e === 'object' && typeof e.message === 'string') {
        const name = typeof e.name === 'string' && e.name ? e.name : 'Error';
        return name + ': ' + e.message;
      }
      return 'a non-Error value was thrown: ' + (typeof e === 'string' ? JSON.stringify(e) : String(e));
    } catch (inner) {
      return 'an unprintable value was thrown';
    }
  };
  const take = (name) => { const v = g[name]; delete g[name]; return v; };

  // Where in the bundle an error was thrown: up to ten "line:column" frames of the bundle's
  // script (1-based, as V8 prints them), for the host to map back to the user's source.
  const exec = RegExp.prototype.exec;
  const BUNDLE_FRAMES = /user-bundle\.js:(\d+):(\d+)/g;
  const framesOf = (e) => {
    const frames = [];
    try {
      if (e === null || typeof e !== 'object') return '';
      const stack = e.stack;
      if (typeof stack !== 'string') return '';
      BUNDLE_FRAMES.lastIndex = 0;
      let m;
      while (frames.length < 10 && (m = apply(exec, BUNDLE_FRAMES, [stack])) !== null) frames.push(m[1] + ':' + m[2]);
    } catch (inner) {
      return '';
    }
    return frames.join(',');
  };

  // Which part of the job is running, so a timeout can say whether the module's own top-level
  // code hung (then every op of the file would hang the same way) or the check did.
  let phase = 'engine';
  Object.defineProperty(g, '__gradientProbePhase', { value: function currentPhase() { return phase; }, writable: false, configurable: false });

  // What the engine builds the op's values from when it runs in a context of its own (the warm
  // runner): this context's intrinsics, captured before user code exists. Held in this closure
  // only; the engine reads its own data properties once per check (engine/sandboxEntry.ts).
  const realm = Object.freeze(Object.assign(Object.create(null), {
    Float64Array: g.Float64Array, Float32Array: g.Float32Array, Int32Array: g.Int32Array, Uint8Array: g.Uint8Array,
    objectPrototype: Object.prototype, parseJson: JSON.parse, newList: function newList() { return []; }, newRecord: function newRecord() { return {}; },
  }));

  // The job in two steps, so the host knows which one a stopped job was in: load (the engine
  // unless it is warm, then the module's own top-level code) and check. Each returns a tagged
  // string; load returns '' when the check may follow.
  let run;
  let warm = false;
  let request;
  // Each step runs once per context: user code that calls them itself gets an error string only.
  let steps = 0;
  const load = function load() {
    if (steps++ !== 0) return 'E' + 'internal: the module was loaded twice';
    const engine = take('__gradientProbeEngine');
    const warmRun = take('__gradientProbeWarmRun');
    const mod = take('__gradientProbeModule');
    request = take('__gradientProbeRequest');
    warm = typeof warmRun === 'function';
    run = warmRun;
    if (!warm) {
      try {
        apply(engine, undefined, builtins);
      } catch (e) {
        return 'E' + 'the check engine failed to load: ' + describe(e);
      }
      run = g.__gradientProbeRun;
    }
    if (typeof run !== 'function') return 'E' + 'the check engine did not define __gradientProbeRun';
    phase = 'load';
    try {
      apply(mod, g, builtins);
    } catch (e) {
      return 'L' + framesOf(e) + '|' + describe(e);
    }
    phase = 'check';
    return '';
  };
  const check = function check() {
    if (steps++ !== 1 || phase !== 'check') return 'E' + 'internal: the check did not follow the module load';
    let result;
    try {
      result = warm ? run(g.__gradientProbeExposed, request, realm) : run(g.__gradientProbeExposed, request);
    } catch (e) {
      return 'E' + 'the check engine threw: ' + describe(e);
    }
    if (typeof result !== 'string') return 'E' + 'the check engine returned ' + typeof result + ', not a string';
    return 'R' + result;
  };
  const drive = function drive() {
    const loaded = load();
    return loaded === '' ? check() : loaded;
  };
  Object.defineProperty(g, '__gradientProbeLoad', { value: load, writable: false, configurable: false });
  Object.defineProperty(g, '__gradientProbeCheck', { value: check, writable: false, configurable: false });
  Object.defineProperty(g, '__gradientProbeDrive', { value: drive, writable: false, configurable: false });

  if (engineContext === true) {
    // The engine's own context (warm runner): loads the engine once, then freezes every
    // intrinsic of this context. Values of this realm can still reach an op's code (a thrown
    // engine error, a callback handed to the op's library), and a frozen realm cannot carry
    // anything from one op to the next through them. Code generation is off here as in every
    // context, so this realm's Function cannot compile either.
    const loadEngine = function loadEngine() {
      const engine = take('__gradientProbeEngine');
      apply(engine, undefined, builtins);
      const run = g.__gradientProbeRun;
      if (typeof run !== 'function') throw new Error('the check engine did not define __gradientProbeRun');
      hardenIntrinsics();
      return run;
    };
    Object.defineProperty(g, '__gradientProbeLoadEngine', { value: loadEngine, writable: false, configurable: false });
  }

  return function arm(jobSeed, jobOutputLimit) {
    state = (jobSeed >>> 0) ^ 0x9e3779b9;
    outputLimit = jobOutputLimit;
  };

  // Freezes the built-ins of this context and everything reachable from them through
  // prototypes and properties (accessors included), plus the intrinsics only reachable through
  // syntax: iterator, generator and async function prototypes.
  function hardenIntrinsics() {
    const getProto = Object.getPrototypeOf;
    const ownKeys = Reflect.ownKeys;
    const describeOwn = Object.getOwnPropertyDescriptor;
    const freeze = Object.freeze;
    const seen = new Set();
    const todo = [];
    const add = (v) => {
      if ((typeof v === 'object' && v !== null) || typeof v === 'function') {
        if (!seen.has(v)) { seen.add(v); todo.push(v); }
      }
    };
    for (const name of BUILTIN_NAMES) if (name !== 'globalThis' && name !== 'console') add(g[name]);
    add(g.console);
    add(g.Iterator);
    add([][Symbol.iterator]());
    add(new Map()[Symbol.iterator]());
    add(new Set()[Symbol.iterator]());
    add(''[Symbol.iterator]());
    add(/./[Symbol.matchAll](''));
    add(function* generator() {});
    add(async function asyncFunction() {});
    add(async function* asyncGenerator() {});
    add(random);
    while (todo.length > 0) {
      const v = todo.pop();
      add(getProto(v));
      for (const key of ownKeys(v)) {
        let d;
        try { d = describeOwn(v, key); } catch (e) { continue; }
        if (!d) continue;
        if ('value' in d) add(d.value);
        else { add(d.get); add(d.set); }
      }
      freeze(v);
    }
  }
})`;
