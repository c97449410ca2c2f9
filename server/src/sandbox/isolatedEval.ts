// Runs one op's whole check inside QuickJS compiled to WebAssembly (the isolated mode): a
// JavaScript interpreter with no Node API at all, its own memory limit and an interrupt handler
// for time. The same context setup and driver as the process runner, so verdicts agree.
import type { QuickJSContext, QuickJSRuntime, QuickJSWASMModule } from 'quickjs-emscripten';
import type { RunnerJobFields, RunnerReply } from './jobTypes';
import { CONTEXT_SETUP_SOURCE, FIXED_DATE_MS } from './contextSetup';
import { bundleFramesFrom, wrapWithBuiltins } from './bundleWrapper';

/**
 * Highest memory limit the interpreter gets, in MiB. QuickJS here is a 32-bit WebAssembly
 * build, so its whole heap lives in one linear memory of at most 4 GiB; isolated mode is for
 * small ops, and 512 MiB keeps the language server's own process small (our choice).
 */
export const ISOLATED_MEMORY_CAP_MB = 512;

/**
 * Interpreter stack for user code, in bytes: QuickJS's own default. It stops unbounded
 * recursion with QuickJS's catchable "stack overflow" before the WebAssembly code exhausts the
 * host thread's native stack (measured: at 1 MiB the host's V8 overflowed first, which leaves
 * the interpreter unusable).
 */
export const ISOLATED_STACK_BYTES = 256 * 1024;

/**
 * The interpreter's WebAssembly memory may grow past the live bytes its own limit counts
 * (allocator fragmentation: measured, an op filling 1e6-element arrays under a 64 MiB limit grew
 * it to ~2 GiB). The op is stopped once that memory exceeds this multiple of the limit (our
 * choice: room for fragmentation, far below runaway growth).
 */
export const ISOLATED_HEAP_FACTOR = 2;

/** Time allowed to read the console text and phase after a job stopped, in milliseconds. */
const READ_BACK_MS = 1000;

/** One op's check for the interpreter: the same fields the process runner gets. */
export type IsolatedJob = RunnerJobFields & {
  engineCode: string;
  bundleCode: string;
  /** The interpreter's memory limit, in MiB (already capped at ISOLATED_MEMORY_CAP_MB). */
  memoryLimitMb: number;
};

export type IsolatedAnswer = RunnerReply & {
  /** The interpreter may be in a bad state (out of memory, an abort): the worker should start afresh. */
  poisoned: boolean;
};

/** An exception thrown by guest code, as plain host data. */
class GuestError extends Error {}

/** The text of a dumped guest error: `Name: message`, or the value itself. */
function guestErrorText(dumped: unknown): string {
  if (dumped !== null && typeof dumped === 'object') {
    const d = dumped as { name?: unknown; message?: unknown };
    if (typeof d.message === 'string') return `${typeof d.name === 'string' && d.name ? d.name : 'Error'}: ${d.message}`;
  }
  try {
    return typeof dumped === 'string' ? dumped : (JSON.stringify(dumped) ?? String(dumped));
  } catch {
    return String(dumped);
  }
}

/** Evaluates code in the context; returns the result as host data, throws GuestError on an exception. */
function evaluate(ctx: QuickJSContext, code: string, filename: string): unknown {
  const result = ctx.evalCode(code, filename);
  if (result.error) {
    const dumped: unknown = ctx.dump(result.error);
    result.error.dispose();
    throw new GuestError(guestErrorText(dumped));
  }
  const value: unknown = ctx.dump(result.value);
  result.value.dispose();
  return value;
}

/** Reads a string the setup script exposes, under a fresh short deadline ('' when unreadable). */
function readBack(runtime: QuickJSRuntime, ctx: QuickJSContext, expression: string): string {
  const until = Date.now() + READ_BACK_MS;
  runtime.setInterruptHandler(() => Date.now() > until);
  try {
    const value = evaluate(ctx, expression, 'gradient-probe-read.js');
    return typeof value === 'string' ? value : '';
  } catch {
    return '';
  }
}

/**
 * Runs the promise jobs the op left queued (an import() refusal, an async callback) under a
 * short deadline: a runtime still holding them cannot be freed, and it matches the process
 * runner, which drains them after the check.
 */
function settlePendingJobs(runtime: QuickJSRuntime): void {
  const until = Date.now() + READ_BACK_MS;
  runtime.setInterruptHandler(() => Date.now() > until);
  for (let round = 0; round < 100 && runtime.hasPendingJob(); round++) {
    const result = runtime.executePendingJobs();
    if (result.error) result.error.dispose();
    if (Date.now() > until) break;
  }
}

/**
 * Runs the job in a fresh interpreter runtime and context; never throws. `heapBytes` reports the
 * size of the interpreter's WebAssembly memory (0 when unknown).
 */
export function runIsolatedJob(quickjs: QuickJSWASMModule, job: IsolatedJob, heapBytes: () => number = () => 0): IsolatedAnswer {
  const handles: { runtime?: QuickJSRuntime; ctx?: QuickJSContext } = {};
  const answer = runInside(quickjs, job, handles, heapBytes);
  try {
    handles.ctx?.dispose();
    handles.runtime?.dispose();
  } catch {
    // A runtime stopped mid-allocation may not free cleanly; the worker starts afresh.
    answer.poisoned = true;
  }
  return answer;
}

function runInside(quickjs: QuickJSWASMModule, job: IsolatedJob, handles: { runtime?: QuickJSRuntime; ctx?: QuickJSContext }, heapBytes: () => number): IsolatedAnswer {
  const started = performance.now();
  const elapsed = (): number => performance.now() - started;
  const memoryMb = Math.min(job.memoryLimitMb, ISOLATED_MEMORY_CAP_MB);
  let poisoned = false;
  const fail = (error: string, extra: { timedOut?: boolean; duringLoad?: boolean; output?: string } = {}): IsolatedAnswer => ({
    ok: false,
    error,
    timedOut: extra.timedOut ?? false,
    duringLoad: extra.duringLoad ?? false,
    poisoned,
    output: extra.output ?? '',
    elapsedMs: elapsed(),
  });
  try {
    const runtime = quickjs.newRuntime();
    handles.runtime = runtime;
    runtime.setMemoryLimit(memoryMb * 1024 * 1024);
    runtime.setMaxStackSize(ISOLATED_STACK_BYTES);
    const deadline = Date.now() + job.timeLimitMs;
    let interrupted = false;
    let overHeap = false;
    const heapCap = Math.max(heapBytes(), 0) + ISOLATED_HEAP_FACTOR * memoryMb * 1024 * 1024;
    runtime.setInterruptHandler(() => {
      if (heapBytes() > heapCap) {
        overHeap = true;
        return true;
      }
      if (Date.now() <= deadline) return false;
      interrupted = true;
      return true;
    });
    // import() in the op: refused, and remembered so the op ends as an error (as in the runner process).
    let importAttempt: string | undefined;
    runtime.setModuleLoader((name) => {
      importAttempt = String(name).slice(0, 200);
      return { error: new Error('import() is not available to code checked in the sandbox') };
    });
    const c = runtime.newContext();
    handles.ctx = c;
    let tagged: unknown;
    try {
      evaluate(c, `(${CONTEXT_SETUP_SOURCE})(${job.seed >>> 0}, ${FIXED_DATE_MS}, ${Math.max(0, Math.floor(job.outputLimitChars))}); undefined`, 'gradient-probe-context-setup.js');
      evaluate(c, `globalThis.__gradientProbeEngine = ${wrapWithBuiltins(job.engineCode)}; undefined`, 'engine-in-sandbox.js');
      evaluate(c, `globalThis.__gradientProbeModule = ${wrapWithBuiltins(job.bundleCode)}; undefined`, 'user-bundle.js');
      evaluate(c, `globalThis.__gradientProbeRequest = ${JSON.stringify(job.requestJson)}; undefined`, 'gradient-probe-request.js');
      tagged = evaluate(c, '__gradientProbeDrive()', 'gradient-probe-drive.js');
    } catch (e) {
      const text = e instanceof GuestError ? e.message : (e as Error).message;
      const output = readBack(runtime, c, '__gradientProbeOutput()');
      if (overHeap) {
        poisoned = true;
        return fail(
          `the op's memory in the interpreter grew past ${ISOLATED_HEAP_FACTOR} × its limit of ${memoryMb} MiB (${Math.round(heapBytes() / 2 ** 20)} MiB of WebAssembly memory); it was stopped`,
          { output },
        );
      }
      if (interrupted) {
        const duringLoad = readBack(runtime, c, '__gradientProbePhase()') === 'load';
        const error = duringLoad ? `timed out after ${job.timeLimitMs} ms while loading the module (its top-level code did not finish)` : `timed out after ${job.timeLimitMs} ms`;
        return fail(error, { timedOut: true, duringLoad, output });
      }
      if (/out of memory/i.test(text)) {
        poisoned = true;
        return fail(`the op ran out of the interpreter's memory limit of ${memoryMb} MiB (${text})`, { output });
      }
      return fail(`the interpreter failed: ${text}`, { output });
    }
    settlePendingJobs(runtime);
    const output = readBack(runtime, c, '__gradientProbeOutput()');
    if (importAttempt !== undefined) {
      return fail(`the op called import(${JSON.stringify(importAttempt)}), which code checked in the sandbox cannot use; the import was refused`, { output });
    }
    if (typeof tagged !== 'string' || tagged.length === 0) return fail('internal: the check returned no result', { output });
    const body = tagged.slice(1);
    switch (tagged[0]) {
      case 'R':
        return { ok: true, outcomeJson: body, output, elapsedMs: elapsed(), poisoned };
      case 'L': {
        // 'frames|message', as in the runner process (contextSetup's driver).
        const bar = body.indexOf('|');
        const answer = fail(`the module threw while loading: ${body.slice(bar + 1)}`, { duringLoad: true, output });
        if (!answer.ok) answer.bundleFrames = bundleFramesFrom(body.slice(0, Math.max(0, bar)));
        return answer;
      }
      default:
        return fail(body, { output });
    }
  } catch (e) {
    // The WebAssembly instance itself failed (an abort): it cannot be trusted for the next job.
    poisoned = true;
    return fail(`the interpreter stopped: ${(e as Error).message}`);
  }
}
