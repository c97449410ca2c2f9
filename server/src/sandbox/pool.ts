// RunnerPool: a few warm runner processes that run one op's whole check per job, so one bad op
// becomes that op's error and every other op still runs. The job queue, the supervised process
// (watchdog, memory watch, kill, stderr) and the shapes are shared with the isolated runner; what
// is the pool's own: several processes, the hello handshake and start fallbacks, bundles a runner
// already holds, and runners matched to a job's memory limit.
import { availableParallelism, cpus } from 'node:os';
import { CHILD_SCRIPT_NAME, EngineCode, locateScript } from './assets';
import { KnownBundles } from './knownBundles';
import { JobQueue, closedWhile, type QueuedJob } from './jobQueue';
import { emptyStats, runnerJobFields, type RunnerStats, type RunJob, type RunResult } from './jobTypes';
import { RESIDENT_HEADROOM_MB } from './memoryWatch';
import type { ChildMessage, HelloMessage, JobMessage, ResultMessage } from './protocol';
import { runResultFromReply } from './runReply';
import { runnerMemoryFailure, runnerTimeoutFailure, type RunnerStep } from './runnerLimits';
import { RunnerStartPolicy, isolationReport, type IsolationReport, type RunnerCommand } from './runnerCommand';
import { SupervisedProcess, runnerKillGraceMs } from './supervisedProcess';

// The shapes callers of the pool use, from where they are declared.
export type { RunJob, RunResult } from './jobTypes';
export type { IsolationReport } from './runnerCommand';

/** The pool's counters (the same shape as the isolated runner's). */
export type PoolStats = RunnerStats;

/** A runner that does not say hello within this time is killed and reported, in ms (cold start is ~100–200 ms). */
export const START_TIMEOUT_MS = 15_000;

/**
 * Jobs after which a coverage runner is replaced. While V8 collects precise coverage it keeps the
 * feedback of every function it has seen alive, and each job's fresh context brings new functions:
 * measured, a coverage runner grew 116 → 178 MiB in 300 jobs, and reading coverage slowed with it.
 * Stopping and restarting coverage between jobs released nothing (measured the same); a new
 * process does, at one cold start per this many jobs (bench/PERFORMANCE.md).
 */
export const COVERAGE_RUNNER_JOBS = 100;

export interface RunnerPoolOptions {
  /** Number of runner processes (default min(2, cores)). */
  size?: number;
  /** Paths of the built runner script and engine (default: found next to dist/). */
  childScript?: string;
  engineScript?: string;
  /** Receives one line per noteworthy event (runner replaced, permission flag refused). */
  log?: (line: string) => void;
  /** Runners that collect V8 block coverage for the separate coverage run (RunnerStartPolicy). */
  coverage?: boolean;
}

interface Runner {
  process: SupervisedProcess;
  command: RunnerCommand;
  memoryLimitMb: number;
  state: 'starting' | 'idle' | 'busy' | 'dead';
  knownBundles: KnownBundles;
  jobsRun: number;
  current?: QueuedJob;
  /** The step the current job last reached (the child's 'step' messages). */
  currentStep: RunnerStep;
  startTimer?: NodeJS.Timeout;
}

function defaultSize(): number {
  const cores = typeof availableParallelism === 'function' ? availableParallelism() : cpus().length;
  return Math.max(1, Math.min(2, cores));
}

export class RunnerPool {
  readonly size: number;
  readonly stats: PoolStats = emptyStats();

  private readonly runners = new Set<Runner>();
  private readonly queue: JobQueue;
  private readonly log: (line: string) => void;
  private readonly childScriptOption?: string;
  private readonly engine: EngineCode;
  private readonly startPolicy: RunnerStartPolicy;
  /** Jobs after which a runner is replaced (coverage runners only, COVERAGE_RUNNER_JOBS). */
  private readonly jobsPerRunner: number | undefined;
  private lastHello?: { hello: HelloMessage; command: RunnerCommand; memoryLimitMb: number };

  constructor(opts: RunnerPoolOptions = {}) {
    this.size = Math.max(1, Math.floor(opts.size ?? defaultSize()));
    this.childScriptOption = opts.childScript;
    this.engine = new EngineCode(opts.engineScript);
    this.log = opts.log ?? (() => undefined);
    this.startPolicy = new RunnerStartPolicy({ coverage: opts.coverage === true });
    this.jobsPerRunner = opts.coverage === true ? COVERAGE_RUNNER_JOBS : undefined;
    this.queue = new JobQueue(this.stats, (job) => this.cancelRunning(job));
  }

  /** The isolation the latest runner reported from inside, or undefined before any started. */
  isolation(): IsolationReport | undefined {
    const last = this.lastHello;
    return last && isolationReport(last.hello, last.command, last.memoryLimitMb);
  }

  /** Starts runners ahead of the first job so it does not pay the cold start. */
  warm(memoryLimitMb: number): void {
    while (!this.queue.isClosed && this.runners.size < this.size) {
      if (!this.spawnRunner(memoryLimitMb)) break;
    }
  }

  /** Runs one op's check; never rejects. */
  run(job: RunJob): Promise<RunResult> {
    const result = this.queue.submit(job);
    this.dispatch();
    return result;
  }

  /** Kills every runner and fails queued jobs. */
  async dispose(): Promise<void> {
    if (this.queue.isClosed) return;
    this.queue.close();
    const exits: Promise<void>[] = [];
    for (const runner of this.runners) {
      if (runner.current) this.finishJob(runner, closedWhile(runner.current));
      exits.push(this.kill(runner, 'closed'));
    }
    await Promise.all(exits);
  }

  // ---- internals ----

  /** The caller's signal aborted a job a runner holds: the job ends now, the runner is replaced. */
  private cancelRunning(job: QueuedJob): void {
    for (const runner of this.runners) {
      if (runner.current === job) {
        this.finishJob(runner, { error: 'cancelled', elapsedMs: Date.now() - job.startedAt, cause: 'cancelled' });
        this.replace(runner, 'cancelled');
        return;
      }
    }
  }

  private spawnRunner(memoryLimitMb: number): Runner | undefined {
    const script = locateScript(CHILD_SCRIPT_NAME, 'the runner script', this.childScriptOption);
    if ('error' in script) {
      this.queue.failWaiting(script.error);
      return undefined;
    }
    const engine = this.engine.load();
    if ('error' in engine) {
      this.queue.failWaiting(engine.error);
      return undefined;
    }
    const command = this.startPolicy.command(script.path, memoryLimitMb);
    const engineCode = engine.code;
    // The handlers need the runner, which needs the process: filled in right below.
    const holder: { runner?: Runner } = {};
    const proc = SupervisedProcess.start(command, {
      onMessage: (m) => holder.runner && this.onMessage(holder.runner, m as ChildMessage, engineCode),
      onExit: (code, signal) => holder.runner && this.onExit(holder.runner, code, signal),
    });
    if (typeof proc === 'string') {
      this.queue.failWaiting(`the runner process could not start: ${proc}`);
      return undefined;
    }
    this.stats.spawned++;
    const runner: Runner = { process: proc, command, memoryLimitMb, state: 'starting', knownBundles: new KnownBundles(), jobsRun: 0, currentStep: 'start' };
    holder.runner = runner;
    this.runners.add(runner);
    runner.startTimer = setTimeout(() => {
      if (runner.state === 'starting') {
        this.log(`runner ${proc.pid ?? '?'} did not start within ${START_TIMEOUT_MS} ms; killing it`);
        proc.abandon();
      }
    }, START_TIMEOUT_MS);
    runner.startTimer.unref();
    return runner;
  }

  private onMessage(runner: Runner, message: ChildMessage, engineCode: string): void {
    if (message.type === 'hello') {
      if (runner.startTimer) clearTimeout(runner.startTimer);
      runner.state = 'idle';
      this.startPolicy.started();
      this.lastHello = { hello: message, command: runner.command, memoryLimitMb: runner.memoryLimitMb };
      if (runner.command.permissionFlag && !message.permissionActive) {
        this.log(`runner started with ${runner.command.permissionFlag} but reports the permission model inactive`);
      }
      runner.process.send({ type: 'init', engineCode });
      runner.process.hold(false);
      this.dispatch();
      return;
    }
    const job = runner.current;
    if (!job || message.id !== job.id) return;
    if (message.type === 'missing-bundle') {
      runner.knownBundles.forget(job.job.bundleKey);
      this.sendJob(runner, job);
      return;
    }
    if (message.type === 'step') {
      runner.currentStep = message.step;
      return;
    }
    this.onResult(runner, message);
  }

  private onResult(runner: Runner, message: ResultMessage): void {
    // A runner never answers a job as timed out: it has no timeout inside (startJob's guard ends those).
    this.finishJob(runner, runResultFromReply(message));
    if (this.jobsPerRunner !== undefined && runner.jobsRun >= this.jobsPerRunner) {
      this.replace(runner, `recycled after ${runner.jobsRun} jobs`);
      return;
    }
    runner.state = 'idle';
    runner.process.hold(false);
    // Next turn: the caller may react to this result by cancelling queued jobs (a module that
    // fails at load), and a job that never starts costs nothing while a started one costs a runner.
    setImmediate(() => this.dispatch());
  }

  private finishJob(runner: Runner, result: RunResult): void {
    const job = runner.current;
    runner.current = undefined;
    runner.process.unguard();
    if (job) {
      this.stats.jobsFinished++;
      this.queue.settle(job, result);
    }
  }

  private onExit(runner: Runner, code: number | null, signal: NodeJS.Signals | null): void {
    const wasStarting = runner.state === 'starting';
    const onPurpose = runner.process.killReason !== undefined;
    runner.state = 'dead';
    this.runners.delete(runner);
    if (runner.startTimer) clearTimeout(runner.startTimer);
    if (runner.current) {
      if (!onPurpose) this.stats.crashes++;
      const message = runner.process.crashText('runner', code, signal, runner.memoryLimitMb);
      this.finishJob(runner, { error: message, elapsedMs: Date.now() - runner.current.startedAt, cause: 'crash' });
    }
    if (this.queue.isClosed) return;
    if (wasStarting && !onPurpose) {
      const verdict = this.startPolicy.failedStart(runner.command, runner.process.stderrTail, code, signal);
      if (verdict && 'giveUp' in verdict) return this.queue.failWaiting(verdict.giveUp);
      if (verdict) this.log(verdict.log);
    }
    this.dispatch();
  }

  /** Starts a runner in place of one that was killed, so the pool stays warm. */
  private replenish(memoryLimitMb: number): void {
    if (this.queue.isClosed) return;
    if (this.runners.size < this.size) this.spawnRunner(memoryLimitMb);
  }

  /** Takes a runner out of the pool now (dispatch never hands it another job) and kills it. */
  private kill(runner: Runner, reason: string): Promise<void> {
    this.runners.delete(runner);
    if (!runner.process.alive) runner.state = 'dead';
    return runner.process.kill(reason);
  }

  private dispatch(): void {
    dispatching: while (!this.queue.isClosed && this.queue.length > 0) {
      const next = this.queue.peek()!;
      const limit = next.job.settings.memoryLimitMb;
      let runner: Runner | undefined;
      for (const r of this.runners) {
        if (r.state === 'idle' && r.memoryLimitMb === limit) {
          runner = r;
          break;
        }
      }
      if (!runner) {
        let startingWithLimit = 0;
        for (const r of this.runners) if (r.state === 'starting' && r.memoryLimitMb === limit) startingWithLimit++;
        if (startingWithLimit < this.queue.length && this.runners.size < this.size) {
          if (this.spawnRunner(limit)) continue dispatching;
          return;
        }
        if (startingWithLimit === 0 && this.runners.size >= this.size) {
          // Full pool: an idle runner started with another memory limit makes way.
          for (const r of this.runners) {
            if (r.state === 'idle' && r.memoryLimitMb !== limit) {
              void this.kill(r, 'memory limit changed');
              if (this.spawnRunner(limit)) continue dispatching;
              return;
            }
          }
        }
        return;
      }
      this.startJob(runner, this.queue.take()!);
    }
  }

  private startJob(runner: Runner, job: QueuedJob): void {
    runner.state = 'busy';
    runner.current = job;
    runner.currentStep = 'start';
    this.stats.jobsStarted++;
    if (runner.jobsRun > 0) this.stats.warmJobs++;
    runner.jobsRun++;
    runner.process.hold(true);
    const limitMs = job.job.settings.timeLimitMs;
    runner.process.guard(
      limitMs,
      runnerKillGraceMs(limitMs),
      runner.memoryLimitMb + RESIDENT_HEADROOM_MB,
      () => {
        if (runner.current !== job) return;
        this.stats.timeouts++;
        this.finishJob(runner, runnerTimeoutFailure(limitMs, runner.currentStep, job.startedAt));
        this.replace(runner, 'watchdog');
      },
      (usedMb) => {
        if (runner.current !== job) return;
        this.stats.memoryKills++;
        this.finishJob(runner, runnerMemoryFailure(usedMb, runner.memoryLimitMb, job.startedAt));
        this.replace(runner, 'memory');
      },
    );
    this.sendJob(runner, job);
  }

  /** Kills a runner and starts another in its place, so the pool stays warm. */
  private replace(runner: Runner, reason: string): void {
    void this.kill(runner, reason);
    this.replenish(runner.memoryLimitMb);
  }

  private sendJob(runner: Runner, queued: QueuedJob): void {
    const { job } = queued;
    const known = runner.knownBundles.remember(job.bundleKey);
    if (!known) this.stats.bundlesSent++;
    const message: JobMessage = {
      type: 'job',
      id: queued.id,
      bundleKey: job.bundleKey,
      bundleCode: known ? undefined : job.bundleCode,
      ...runnerJobFields(job),
    };
    runner.process.send(message);
  }
}
