// The isolated mode's host side: runs ops one at a time in a separate process that evaluates
// them in QuickJS compiled to WebAssembly (no Node API reachable). The job queue, the supervised
// process (watchdog, memory watch, kill, stderr) and the shapes are shared with RunnerPool, so
// the Checker can use either; what is its own: one process started on first use, the engine sent
// with every job, a restart after an answer marked poisoned, and the interpreter's memory limit.
// Slower (QuickJS interprets): for small ops.
import { EngineCode, ISOLATED_WORKER_SCRIPT_NAME, locateScript } from './assets';
import { ISOLATED_HEAP_FACTOR, ISOLATED_MEMORY_CAP_MB } from './isolatedEval';
import type { IsolatedReply, IsolatedRequest } from './isolatedWorker';
import { JobQueue, closedWhile, type QueuedJob } from './jobQueue';
import { emptyStats, runnerJobFields, type RunJob, type RunResult, type RunnerStats } from './jobTypes';
import { RESIDENT_HEADROOM_MB } from './memoryWatch';
import { runResultFromReply } from './runReply';
import { runnerEnvironment } from './runnerCommand';
import { KILL_GRACE_MS, SupervisedProcess } from './supervisedProcess';

export { ISOLATED_WORKER_SCRIPT_NAME } from './assets';

/**
 * V8 heap of the interpreter process itself, in MiB: it holds only the bridge and the messages;
 * the interpreter's memory is WebAssembly memory, watched separately.
 */
const BRIDGE_HEAP_MB = 256;

export interface IsolatedRunnerOptions {
  /** Paths of the built interpreter script and engine (default: found next to dist/). */
  workerScript?: string;
  engineScript?: string;
  log?: (line: string) => void;
}

export class IsolatedRunner {
  /** The same counters as the pool's; every job sends its bundle (the interpreter keeps none). */
  readonly stats: RunnerStats = emptyStats();
  private readonly queue: JobQueue;
  private readonly engine: EngineCode;
  private readonly log: (line: string) => void;
  private worker: SupervisedProcess | undefined;
  /** Jobs the current worker process has taken (for warm reuse in the stats). */
  private workerJobs = 0;
  private current: QueuedJob | undefined;

  constructor(private readonly options: IsolatedRunnerOptions = {}) {
    this.log = options.log ?? (() => undefined);
    this.engine = new EngineCode(options.engineScript);
    this.queue = new JobQueue(this.stats, (job) => {
      if (this.current !== job) return;
      this.finish({ error: 'cancelled', elapsedMs: Date.now() - job.startedAt, cause: 'cancelled' });
      this.restart('cancelled');
    });
  }

  /** Runs one op's check in the interpreter; never rejects. */
  run(job: RunJob): Promise<RunResult> {
    const result = this.queue.submit(job);
    this.next();
    return result;
  }

  async dispose(): Promise<void> {
    this.queue.close();
    if (this.current) this.finish(closedWhile(this.current));
    await this.stopWorker('closed');
  }

  private ensureWorker(): SupervisedProcess | string {
    if (this.worker) return this.worker;
    const script = locateScript(ISOLATED_WORKER_SCRIPT_NAME, 'the interpreter script', this.options.workerScript);
    if ('error' in script) return script.error;
    // Like the runner processes: an environment that carries nothing of ours.
    const holder: { proc?: SupervisedProcess } = {};
    const proc = SupervisedProcess.start(
      { command: process.execPath, args: [`--max-old-space-size=${BRIDGE_HEAP_MB}`, '--no-warnings', script.path], env: runnerEnvironment() },
      {
        onMessage: (reply) => holder.proc && this.onReply(holder.proc, reply as IsolatedReply),
        onExit: (code, signal) => holder.proc && this.onExit(holder.proc, code, signal),
      },
    );
    if (typeof proc === 'string') return `the interpreter process could not start: ${proc}`;
    holder.proc = proc;
    this.stats.spawned++;
    this.worker = proc;
    this.workerJobs = 0;
    proc.hold(false);
    return proc;
  }

  private next(): void {
    while (!this.queue.isClosed && !this.current && this.queue.length > 0) {
      // When nothing can run, every waiting job gets the reason (a later job tries again).
      const engine = this.engine.load();
      if ('error' in engine) return this.queue.failWaiting(engine.error);
      const worker = this.ensureWorker();
      if (typeof worker === 'string') return this.queue.failWaiting(worker);
      this.start(worker, this.queue.take()!, engine.code);
    }
  }

  private start(proc: SupervisedProcess, queued: QueuedJob, engineCode: string): void {
    this.current = queued;
    this.stats.jobsStarted++;
    if (this.workerJobs > 0) this.stats.warmJobs++;
    this.workerJobs++;
    this.stats.bundlesSent++;
    proc.hold(true);
    const { job } = queued;
    const limitMs = job.settings.timeLimitMs;
    const memoryMb = Math.min(job.settings.memoryLimitMb, ISOLATED_MEMORY_CAP_MB);
    // The interpreter's WebAssembly memory may outgrow its own limit inside one long built-in
    // call, where no interrupt runs: the process is killed from outside then.
    const residentLimit = ISOLATED_HEAP_FACTOR * memoryMb + RESIDENT_HEADROOM_MB;
    proc.guard(
      limitMs,
      KILL_GRACE_MS,
      residentLimit,
      () => {
        if (this.current !== queued) return;
        this.stats.timeouts++;
        this.finish({ error: `timed out after ${limitMs} ms (the interpreter did not stop by itself and was killed)`, elapsedMs: Date.now() - queued.startedAt, cause: 'timeout' });
        this.restart('watchdog');
      },
      (usedMb) => {
        if (this.current !== queued) return;
        this.stats.memoryKills++;
        this.finish({
          error: `the op used ${Math.round(usedMb)} MiB of memory in the interpreter, over the limit of ${residentLimit} MiB (${ISOLATED_HEAP_FACTOR} × its memory limit of ${memoryMb} MiB plus ${RESIDENT_HEADROOM_MB} MiB for the runtime); it was stopped`,
          elapsedMs: Date.now() - queued.startedAt,
          cause: 'memory',
        });
        this.restart('memory');
      },
    );
    const request: IsolatedRequest = {
      id: queued.id,
      engineCode,
      bundleCode: job.bundleCode,
      memoryLimitMb: memoryMb,
      ...runnerJobFields(job),
    };
    proc.send(request);
  }

  private onReply(proc: SupervisedProcess, reply: IsolatedReply): void {
    const queued = this.current;
    if (proc !== this.worker || !queued || reply.id !== queued.id) return;
    if (!reply.ok && reply.timedOut) this.stats.timeouts++;
    this.finish(runResultFromReply(reply));
    // An answer marked poisoned (out of memory, an abort): the WebAssembly instance may be
    // unusable, so the next job gets a fresh process.
    if (reply.poisoned) this.restart('poisoned');
    else this.next();
  }

  private onExit(proc: SupervisedProcess, code: number | null, signal: NodeJS.Signals | null): void {
    // A process we stopped on purpose was already replaced.
    if (proc !== this.worker) return;
    this.worker = undefined;
    const queued = this.current;
    if (queued) {
      this.stats.crashes++;
      const why = proc.crashText('interpreter', code, signal, Math.min(queued.job.settings.memoryLimitMb, ISOLATED_MEMORY_CAP_MB));
      this.log(why);
      this.finish({ error: why, elapsedMs: Date.now() - queued.startedAt, cause: 'crash' });
    }
    this.next();
  }

  private finish(result: RunResult): void {
    const queued = this.current;
    this.current = undefined;
    this.worker?.unguard();
    this.worker?.hold(false);
    if (queued) {
      this.stats.jobsFinished++;
      this.queue.settle(queued, result);
    }
  }

  /** Ends the process (the next job starts a fresh one) and goes on with the queue. */
  private restart(reason: string): void {
    void this.stopWorker(reason);
    this.next();
  }

  private stopWorker(reason: string): Promise<void> {
    const proc = this.worker;
    this.worker = undefined;
    return proc ? proc.kill(reason) : Promise.resolve();
  }
}
