// The isolated mode's host side: runs ops one at a time in a separate process that evaluates
// them in QuickJS compiled to WebAssembly (no Node API reachable), with a watchdog for when the
// interpreter's own interrupt does not stop an op in time and a memory watch for WebAssembly
// memory that grows past the interpreter's own limit. Same job and result shapes as RunnerPool,
// so the Checker can use either. Slower (QuickJS interprets): for small ops.
import { spawn, type ChildProcess } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { ENGINE_SCRIPT_NAME, findBuiltAsset } from './assets';
import { ISOLATED_HEAP_FACTOR, ISOLATED_MEMORY_CAP_MB } from './isolatedEval';
import type { IsolatedReply, IsolatedRequest } from './isolatedWorker';
import { RESIDENT_HEADROOM_MB, watchMemory } from './memoryWatch';
import { KILL_GRACE_MS, OUTPUT_LIMIT_CHARS, type RunJob, type RunResult } from './pool';
import { runResultFromReply } from './runReply';
import { runnerEnvironment } from './runnerCommand';

/** Name of the built interpreter script next to the other built assets. */
export const ISOLATED_WORKER_SCRIPT_NAME = 'isolated-worker.js';

/**
 * V8 heap of the interpreter process itself, in MiB: it holds only the bridge and the messages;
 * the interpreter's memory is WebAssembly memory, watched separately.
 */
const BRIDGE_HEAP_MB = 256;

/** Counters for tests and logs. */
export interface IsolatedStats {
  processesStarted: number;
  jobs: number;
  /** Processes killed because the interpreter did not stop an op in time. */
  watchdogKills: number;
  /** Processes killed because their memory passed the limit. */
  memoryKills: number;
}

interface Pending {
  id: number;
  job: RunJob;
  resolve: (r: RunResult) => void;
}


export interface IsolatedRunnerOptions {
  /** Paths of the built interpreter script and engine (default: found next to dist/). */
  workerScript?: string;
  engineScript?: string;
  log?: (line: string) => void;
}

export class IsolatedRunner {
  readonly stats: IsolatedStats = { processesStarted: 0, jobs: 0, watchdogKills: 0, memoryKills: 0 };
  private proc: ChildProcess | undefined;
  private readonly queue: Pending[] = [];
  private current: Pending | undefined;
  private watchdog: NodeJS.Timeout | undefined;
  private stopWatch: (() => void) | undefined;
  private engineCode: string | undefined;
  private nextId = 1;
  private disposed = false;
  private stderrTail = '';
  private readonly log: (line: string) => void;

  constructor(private readonly options: IsolatedRunnerOptions = {}) {
    this.log = options.log ?? (() => undefined);
  }

  /** Runs one op's check in the interpreter; never rejects. */
  run(job: RunJob): Promise<RunResult> {
    return new Promise<RunResult>((resolve) => {
      if (this.disposed) return resolve({ error: 'the checker was closed before this op ran', elapsedMs: 0, cause: 'closed' });
      if (job.signal?.aborted) return resolve({ error: 'cancelled', elapsedMs: 0, cause: 'cancelled' });
      const onAbort = (): void => this.cancel(pending);
      // The listener goes when the job ends, so a long-lived signal does not collect one per op.
      const pending: Pending = { id: this.nextId++, job, resolve: (r) => { job.signal?.removeEventListener('abort', onAbort); resolve(r); } };
      job.signal?.addEventListener('abort', onAbort, { once: true });
      this.queue.push(pending);
      this.next();
    });
  }

  async dispose(): Promise<void> {
    this.disposed = true;
    for (const p of this.queue.splice(0)) p.resolve({ error: 'the checker was closed before this op ran', elapsedMs: 0, cause: 'closed' });
    if (this.current) this.finish({ error: 'the checker was closed while this op ran', elapsedMs: 0, cause: 'closed' });
    await this.stopProcess();
  }

  private cancel(pending: Pending): void {
    const i = this.queue.indexOf(pending);
    if (i >= 0) {
      this.queue.splice(i, 1);
      pending.resolve({ error: 'cancelled', elapsedMs: 0, cause: 'cancelled' });
    } else if (this.current === pending) {
      this.finish({ error: 'cancelled', elapsedMs: 0, cause: 'cancelled' });
      void this.stopProcess();
      this.next();
    }
  }

  private engine(): string | undefined {
    if (this.engineCode === undefined) {
      const path = this.options.engineScript ?? findBuiltAsset(ENGINE_SCRIPT_NAME);
      if (!path) return undefined;
      this.engineCode = readFileSync(path, 'utf8');
    }
    return this.engineCode;
  }

  private ensureProcess(): ChildProcess | string {
    if (this.proc) return this.proc;
    const script = this.options.workerScript ?? findBuiltAsset(ISOLATED_WORKER_SCRIPT_NAME);
    if (!script) return `the interpreter script ${ISOLATED_WORKER_SCRIPT_NAME} was not found next to dist/ (run npm run build)`;
    let proc: ChildProcess;
    try {
      // Like the runner processes: an environment that carries nothing of ours, no stdio of ours
      // (it must never write into the language server's stdout); stderr only to explain a crash.
      proc = spawn(process.execPath, [`--max-old-space-size=${BRIDGE_HEAP_MB}`, '--no-warnings', script], {
        env: runnerEnvironment(),
        stdio: ['ignore', 'ignore', 'pipe', 'ipc'],
        windowsHide: true,
      });
    } catch (e) {
      return `the interpreter process could not start: ${(e as Error).message}`;
    }
    this.stats.processesStarted++;
    this.stderrTail = '';
    proc.stderr?.setEncoding('utf8');
    proc.stderr?.on('data', (chunk: string) => {
      this.stderrTail = (this.stderrTail + chunk).slice(-2000);
    });
    proc.on('message', (reply: IsolatedReply) => this.onReply(proc, reply));
    proc.on('error', (e) => this.onProcessGone(proc, `the interpreter process failed: ${e.message}`));
    proc.on('exit', (code, signal) => {
      const last = this.stderrTail.trim().split('\n').pop();
      this.onProcessGone(proc, `the interpreter process ended (${signal ? `signal ${signal}` : `exit code ${code}`})${last ? `: ${last.slice(0, 300)}` : ''}`);
    });
    this.proc = proc;
    this.hold(proc, false);
    return proc;
  }

  private next(): void {
    if (this.disposed || this.current || this.queue.length === 0) return;
    const pending = this.queue.shift()!;
    const engineCode = this.engine();
    if (engineCode === undefined) {
      pending.resolve({ error: `the check engine ${ENGINE_SCRIPT_NAME} was not found next to dist/ (run npm run build)`, elapsedMs: 0, cause: 'runner' });
      return this.next();
    }
    const proc = this.ensureProcess();
    if (typeof proc === 'string') {
      pending.resolve({ error: proc, elapsedMs: 0, cause: 'runner' });
      return this.next();
    }
    this.current = pending;
    this.stats.jobs++;
    this.hold(proc, true);
    const { job } = pending;
    const limitMs = job.settings.timeLimitMs;
    const memoryMb = Math.min(job.settings.memoryLimitMb, ISOLATED_MEMORY_CAP_MB);
    const started = Date.now();
    this.watchdog = setTimeout(() => {
      if (this.current !== pending) return;
      this.stats.watchdogKills++;
      this.finish({ error: `timed out after ${limitMs} ms (the interpreter did not stop by itself and was ended)`, elapsedMs: Date.now() - started, cause: 'timeout' });
      void this.stopProcess();
      this.next();
    }, limitMs + KILL_GRACE_MS);
    if (proc.pid !== undefined) {
      // The interpreter's WebAssembly memory may outgrow its own limit inside one long built-in
      // call, where no interrupt runs: the process is killed from outside then.
      const residentLimit = ISOLATED_HEAP_FACTOR * memoryMb + RESIDENT_HEADROOM_MB;
      this.stopWatch = watchMemory(proc.pid, residentLimit, (usedMb) => {
        if (this.current !== pending) return;
        this.stats.memoryKills++;
        this.finish({
          error: `the op used ${Math.round(usedMb)} MiB of memory in the interpreter, over the limit of ${residentLimit} MiB (${ISOLATED_HEAP_FACTOR} × its memory limit of ${memoryMb} MiB plus ${RESIDENT_HEADROOM_MB} MiB for the runtime); it was stopped`,
          elapsedMs: Date.now() - started,
          cause: 'memory',
        });
        void this.stopProcess();
        this.next();
      });
    }
    const request: IsolatedRequest = {
      id: pending.id,
      engineCode,
      bundleCode: job.bundleCode,
      requestJson: JSON.stringify({ op: job.op, settings: job.settings }),
      seed: job.op.seed ?? job.settings.seed,
      timeLimitMs: limitMs,
      memoryLimitMb: memoryMb,
      outputLimitChars: OUTPUT_LIMIT_CHARS,
    };
    proc.send(request);
  }

  private onReply(proc: ChildProcess, reply: IsolatedReply): void {
    const pending = this.current;
    if (proc !== this.proc || !pending || reply.id !== pending.id) return;
    const result = runResultFromReply(reply);
    if (reply.poisoned) void this.stopProcess();
    this.finish(result);
    this.next();
  }

  private onProcessGone(proc: ChildProcess, why: string): void {
    if (proc !== this.proc) return;
    this.proc = undefined;
    if (this.current) {
      this.log(why);
      this.finish({ error: why, elapsedMs: 0, cause: 'crash' });
    }
    this.next();
  }

  private finish(result: RunResult): void {
    const pending = this.current;
    this.current = undefined;
    if (this.watchdog) clearTimeout(this.watchdog);
    this.watchdog = undefined;
    this.stopWatch?.();
    this.stopWatch = undefined;
    if (this.proc) this.hold(this.proc, false);
    pending?.resolve(result);
  }

  /** Keeps the caller's event loop alive only while a job runs (an idle process never blocks exit). */
  private hold(proc: ChildProcess, busy: boolean): void {
    const handles = [proc, proc.channel, proc.stderr] as Array<{ ref?: () => void; unref?: () => void } | null | undefined>;
    for (const h of handles) {
      if (busy) h?.ref?.();
      else h?.unref?.();
    }
  }

  private stopProcess(): Promise<void> {
    const proc = this.proc;
    this.proc = undefined;
    if (!proc || proc.exitCode !== null || proc.signalCode !== null) return Promise.resolve();
    return new Promise<void>((resolve) => {
      proc.once('exit', () => resolve());
      proc.ref();
      proc.kill('SIGKILL');
    });
  }
}
