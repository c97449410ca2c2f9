// The runner process (built to dist/sandbox-child.js): receives one op's whole check per
// message, runs it in a fresh hardened vm context (the pool keeps its time limit), and answers
// with plain strings. Started by RunnerPool with the permission flag, an empty environment and no stdio.
'use strict';
import * as vm from 'node:vm';
import type { ChildMessage, HelloMessage, JobMessage, ParentMessage } from './protocol';
import { CONTEXT_SETUP_SOURCE, FIXED_DATE_MS } from './contextSetup';
import { bundleFramesFrom, wrapWithBuiltins } from './bundleWrapper';
import { COVERAGE_RUNNER_ARG, CoverageSession } from './coverageSession';

/** Compiled bundles kept per process; the parent resends a bundle this child evicted. */
const MAX_CACHED_BUNDLES = 32;

const setupScript = new vm.Script(CONTEXT_SETUP_SOURCE, { filename: 'gradient-probe-context-setup.js' });
const loadScript = new vm.Script('__gradientProbeLoad()', { filename: 'gradient-probe-load.js' });
const checkScript = new vm.Script('__gradientProbeCheck()', { filename: 'gradient-probe-check.js' });
const outputScript = new vm.Script('__gradientProbeOutput()', { filename: 'gradient-probe-output.js' });
const loadEngineScript = new vm.Script('__gradientProbeLoadEngine()', { filename: 'gradient-probe-load-engine.js' });
let engineScript: vm.Script | undefined;
/**
 * The engine's `run`, loaded once into a context of its own and kept warm across checks (its
 * compiled code and type feedback survive); each op's module still gets a fresh context. Undefined
 * when the engine context could not be set up: each context then loads its own engine.
 */
let warmRun: unknown;
/** A fresh op context with the setup script already run, made while the runner was idle. */
let prepared: PreparedContext | undefined;

interface PreparedContext {
  context: vm.Context;
  /** Seeds Math.random and sets the console limit for the job (contextSetup.ts). */
  arm: (seed: number, outputLimit: number) => void;
}
const bundleScripts = new Map<string, vm.Script>();
/** Length of each cached bundle's code, for coverage offsets. */
const bundleLengths = new Map<string, number>();

/** Set in a coverage runner only (started with COVERAGE_RUNNER_ARG, see coverageSession.ts). */
const coverage = process.argv.includes(COVERAGE_RUNNER_ARG) ? new CoverageSession() : undefined;
/** Characters wrapWithBuiltins puts in front of the code. */
const WRAPPER_PREFIX_LENGTH = wrapWithBuiltins('').indexOf('{\n') + 2;

function send(message: ChildMessage): void {
  process.send?.(message);
}

/** Checks from inside that the permission model really denies reading an arbitrary file. */
function helloMessage(): HelloMessage {
  const permission = (process as { permission?: { has(scope: string, ref?: string): boolean } }).permission;
  let permissionActive = false;
  if (permission) {
    try {
      permissionActive = permission.has('fs.read', '/') === false && permission.has('child') === false;
    } catch {
      permissionActive = false;
    }
  }
  const isolation = permissionActive
    ? 'permission model active: no file access beyond the runner script, no child processes, workers or native addons'
    : 'permission model not active in this runtime: user code runs in a hardened vm context without it';
  return { type: 'hello', pid: process.pid, nodeVersion: process.version, permissionActive, isolation };
}

function compileBundle(job: JobMessage): vm.Script | undefined {
  const cached = bundleScripts.get(job.bundleKey);
  if (cached) {
    // Re-insert to keep the map in least-recently-used order.
    bundleScripts.delete(job.bundleKey);
    bundleScripts.set(job.bundleKey, cached);
    return cached;
  }
  if (job.bundleCode === undefined) return undefined;
  const script = new vm.Script(wrapWithBuiltins(job.bundleCode), { filename: 'user-bundle.js', importModuleDynamically: refuseDynamicImport });
  bundleScripts.set(job.bundleKey, script);
  bundleLengths.set(job.bundleKey, job.bundleCode.length);
  while (bundleScripts.size > MAX_CACHED_BUNDLES) {
    const oldest = bundleScripts.keys().next().value;
    if (oldest === undefined) break;
    bundleScripts.delete(oldest);
    bundleLengths.delete(oldest);
  }
  return script;
}

/** Reads the op's console text as a primitive string, whatever the context did. */
function readOutput(context: vm.Context): string {
  try {
    const text: unknown = outputScript.runInContext(context);
    return typeof text === 'string' ? text : '';
  } catch {
    return '';
  }
}

/**
 * Answers every `import()` in user code. Without it Node rejects the import with an error made
 * in the host's realm, whose `.constructor.constructor` is the host's Function, so code that
 * catches it reaches `process` (found by the hostile fixtures). A thrown string is a primitive:
 * it belongs to no realm. Needs `--experimental-vm-modules` on Node 20 (runnerCommand.ts).
 */
function refuseDynamicImport(specifier: unknown): never {
  importAttempt = typeof specifier === 'string' ? specifier.slice(0, 200) : '?';
  throw 'import() is not available to code checked in the sandbox';
}

/** The module the running job's code tried to import(), if any: the op then ends as an error. */
let importAttempt: string | undefined;

/**
 * Text of an error that reached the host. It may come from the context, so only a primitive own
 * `message` is read: calling its toString or a getter would run user code here, untimed.
 */
function hostErrorText(e: unknown): string {
  if (typeof e !== 'object' || e === null) return typeof e === 'string' ? e : typeof e;
  const message = Object.getOwnPropertyDescriptor(e, 'message');
  return message && 'value' in message && typeof message.value === 'string' ? message.value : 'unknown error';
}

/** Options of every context: a global without prototype, no code generation, timed microtasks. */
function newContext(name: string): vm.Context {
  // The global object has no prototype, so `globalThis.constructor.constructor` cannot reach the
  // host's Function (with a plain `{}` it does: checked on Node 20).
  return vm.createContext(Object.create(null), {
    name,
    codeGeneration: { strings: false, wasm: false },
    microtaskMode: 'afterEvaluate',
  });
}

/** A fresh op context, set up before any user code exists in it. */
function prepareContext(): PreparedContext {
  const context = newContext('gradient-probe op');
  const setup: unknown = setupScript.runInContext(context);
  if (typeof setup !== 'function') throw new Error('context setup did not evaluate to a function');
  // Our own function, called with primitives before any user code exists in the context.
  const arm: unknown = (setup as (seed: number, now: number, limit: number, engineContext: boolean) => unknown)(0, FIXED_DATE_MS, 0, false);
  if (typeof arm !== 'function') throw new Error('context setup returned no arm function');
  return { context, arm: arm as PreparedContext['arm'] };
}

/** Prepares the next job's context once the runner has nothing else to do. */
function prepareWhenIdle(): void {
  setImmediate(() => {
    if (prepared !== undefined) return;
    try {
      prepared = prepareContext();
    } catch {
      prepared = undefined; // the job makes its own and reports what failed
    }
  });
}

/**
 * Loads the engine into a context of its own, once per runner. Its setup freezes that context's
 * intrinsics after the engine loaded (contextSetup.ts), so what of it reaches an op cannot carry
 * state to the next op.
 */
function loadWarmEngine(script: vm.Script): unknown {
  try {
    const context = newContext('gradient-probe engine');
    const setup: unknown = setupScript.runInContext(context);
    if (typeof setup !== 'function') return undefined;
    (setup as (seed: number, now: number, limit: number, engineContext: boolean) => unknown)(0, FIXED_DATE_MS, 0, true);
    (context as Record<string, unknown>).__gradientProbeEngine = script.runInContext(context);
    const run: unknown = loadEngineScript.runInContext(context);
    return typeof run === 'function' ? run : undefined;
  } catch {
    return undefined;
  }
}

function runJob(job: JobMessage): void {
  const started = performance.now();
  const elapsed = (): number => performance.now() - started;
  if (!engineScript) {
    send({ type: 'result', id: job.id, ok: false, error: 'internal: the runner has no engine', timedOut: false, duringLoad: false, output: '', elapsedMs: 0 });
    return;
  }
  let bundleScript: vm.Script | undefined;
  try {
    bundleScript = compileBundle(job);
  } catch (e) {
    send({
      type: 'result',
      id: job.id,
      ok: false,
      error: `the bundled module does not compile: ${hostErrorText(e)}`,
      timedOut: false,
      duringLoad: false,
      output: '',
      elapsedMs: elapsed(),
    });
    return;
  }
  if (!bundleScript) {
    send({ type: 'missing-bundle', id: job.id });
    return;
  }
  // A fresh context per op (made ahead while the runner was idle, never used before): globalThis
  // writes and prototype changes die with it.
  let context: vm.Context | undefined;
  let tagged: unknown;
  // Counters start at zero for every job, so nothing of an earlier op is counted for this one.
  coverage?.reset();
  try {
    const fresh = prepared ?? prepareContext();
    prepared = undefined;
    context = fresh.context;
    fresh.arm(job.seed, job.outputLimitChars);
    const sandboxGlobal = context as Record<string, unknown>;
    if (job.warmEngine && typeof warmRun === 'function') sandboxGlobal.__gradientProbeWarmRun = warmRun;
    else sandboxGlobal.__gradientProbeEngine = engineScript.runInContext(context);
    sandboxGlobal.__gradientProbeModule = bundleScript.runInContext(context);
    sandboxGlobal.__gradientProbeRequest = job.requestJson;
    importAttempt = undefined;
    // No vm timeout on either step: each timed call starts and joins a watchdog thread, measured
    // at 0.2–1.1 ms per call in a runner (bench/PERFORMANCE.md), more than a small op's whole
    // check. The time limit is kept by the pool instead: it kills this process when a job runs
    // past it (pool.ts), and these messages tell it which step such a job was in.
    send({ type: 'step', id: job.id, step: 'load' });
    tagged = loadScript.runInContext(context);
    if (tagged === '') {
      send({ type: 'step', id: job.id, step: 'check' });
      tagged = checkScript.runInContext(context);
    }
  } catch (e) {
    const output = context ? readOutput(context) : '';
    send({ type: 'result', id: job.id, ok: false, error: `the runner failed: ${hostErrorText(e)}`, timedOut: false, duringLoad: false, output, elapsedMs: elapsed() });
    return;
  }
  const output = readOutput(context);
  if (importAttempt !== undefined) {
    const error = `the op called import(${JSON.stringify(importAttempt)}), which code checked in the sandbox cannot use; the import was refused`;
    send({ type: 'result', id: job.id, ok: false, error, timedOut: false, duringLoad: false, output, elapsedMs: elapsed() });
    return;
  }
  if (typeof tagged !== 'string' || tagged.length === 0) {
    send({ type: 'result', id: job.id, ok: false, error: 'internal: the check returned no result', timedOut: false, duringLoad: false, output, elapsedMs: elapsed() });
    return;
  }
  const body = tagged.slice(1);
  switch (tagged[0]) {
    case 'R': {
      const blocks = coverage?.take(WRAPPER_PREFIX_LENGTH, bundleLengths.get(job.bundleKey) ?? 0);
      send({ type: 'result', id: job.id, ok: true, outcomeJson: body, output, elapsedMs: elapsed(), ...(blocks ? { coverage: blocks } : {}) });
      return;
    }
    case 'L': {
      const bar = body.indexOf('|');
      const bundleFrames = bundleFramesFrom(body.slice(0, Math.max(0, bar)));
      const error = `the module threw while loading: ${body.slice(bar + 1)}`;
      send({ type: 'result', id: job.id, ok: false, error, timedOut: false, duringLoad: true, bundleFrames, output, elapsedMs: elapsed() });
      return;
    }
    default:
      send({ type: 'result', id: job.id, ok: false, error: body, timedOut: false, duringLoad: false, output, elapsedMs: elapsed() });
  }
}

function onMessage(raw: unknown): void {
  const message = raw as ParentMessage;
  if (message.type === 'init') {
    engineScript = new vm.Script(wrapWithBuiltins(message.engineCode), { filename: 'engine-in-sandbox.js' });
    warmRun = loadWarmEngine(engineScript);
    prepareWhenIdle();
  } else if (message.type === 'job') {
    runJob(message);
    prepareWhenIdle();
  }
}

if (typeof process.send === 'function') {
  process.on('message', onMessage);
  // A promise user code leaves rejected (a refused import(), an async throw) settles after its
  // job ended; by default Node would exit and the next op would be blamed for the crash.
  process.on('unhandledRejection', () => undefined);
  // The parent going away (crash, kill) must not leave this process behind.
  process.on('disconnect', () => process.exit(0));
  send(helloMessage());
}
