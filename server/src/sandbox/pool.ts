// RunnerPool: a few warm runner processes that run one op's whole check per job, with a kill
// watchdog, a memory watch, cancellation and replacement of runners that hang or die, so one
// bad op becomes that op's error and every other op still runs.
import { spawn, type ChildProcess } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { availableParallelism, cpus } from 'node:os';
import type { CheckSettings } from '../engine/settings';
import type { CheckOutcome, OpDescriptor } from '../engine/types';
import { CHILD_SCRIPT_NAME, ENGINE_SCRIPT_NAME, findBuiltAsset } from './assets';
import { RESIDENT_HEADROOM_MB, watchMemory } from './memoryWatch';
import { COVERAGE_RUNNER_ARG } from './coverageSession';
import type { BlockCoverage, ChildMessage, HelloMessage, JobMessage, ResultMessage } from './protocol';
import { runResultFromReply } from './runReply';
import { runnerCommand, type RunnerCommand } from './runnerCommand';

/**
 * Time the parent waits beyond the op's time limit before it kills the runner, in ms. The vm
 * timeout inside the runner normally fires first; the grace covers compiling a large bundle,
 * creating the context and the message round trip (a few ms to ~100 ms measured), with margin
 * for a loaded 2-core machine.
 */
export const KILL_GRACE_MS = 1500;

/** A runner that does not say hello within this time is killed and reported, in ms (cold start is ~100–200 ms). */
export const START_TIMEOUT_MS = 15_000;

/** Console text kept per op, in characters: enough for debugging prints, small enough for a report. */
export const OUTPUT_LIMIT_CHARS = 64 * 1024;

/** Consecutive failed starts after which queued jobs fail instead of retrying forever. */
const MAX_START_FAILURES = 3;

/** Characters of a runner's stderr kept to explain a crash. */
const STDERR_TAIL_CHARS = 4096;

/** Bundles a runner is assumed to hold; mirrors the runner's own cache size. */
const KNOWN_BUNDLES_PER_RUNNER = 32;

export interface RunnerPoolOptions {
  /** Number of runner processes (default min(2, cores)). */
  size?: number;
  /** Paths of the built runner script and engine (default: found next to dist/). */
  childScript?: string;
  engineScript?: string;
  /** Receives one line per noteworthy event (runner replaced, permission flag refused). */
  log?: (line: string) => void;
  /**
   * Runners that collect V8 block coverage (coverageSession.ts). Node 20's permission model
   * denies the inspector, so these runners start without it: they serve only the separate
   * coverage pass, never a verdict.
   */
  coverage?: boolean;
}

/** One op's check: the bundle of its file, the op and the settings. */
export interface RunJob {
  bundleKey: string;
  bundleCode: string;
  op: OpDescriptor;
  settings: CheckSettings;
  signal?: AbortSignal;
}

export type RunResult =
  | { outcome: CheckOutcome; output: string; elapsedMs: number; coverage?: BlockCoverage }
  | {
      error: string;
      output?: string;
      elapsedMs: number;
      cause: RunFailureCause;
      /** For an error thrown while the module loaded: positions in the bundle's code, innermost first. */
      bundleFrames?: Array<{ line: number; column: number }>;
    };

/** Why a job failed without an outcome. */
/** 'load': the module's top-level code threw or hung, so every op of its file would fail the same way. */
export type RunFailureCause = 'timeout' | 'crash' | 'memory' | 'cancelled' | 'load' | 'runner' | 'closed';

/** Counters for tests, benchmarks and logs (no timing: tests assert on these). */
export interface PoolStats {
  /** Runner processes started. */
  spawned: number;
  /** Jobs handed to a runner that had already run a job before (warm reuse). */
  warmJobs: number;
  jobsStarted: number;
  jobsFinished: number;
  /** Bundle code sent over IPC (a runner that holds a bundle gets only its key). */
  bundlesSent: number;
  timeouts: number;
  crashes: number;
  memoryKills: number;
  cancelled: number;
}

/** What isolation the runners really have, as reported from inside the latest runner. */
export interface IsolationReport {
  /** Process id of the runner that reported (for diagnostics). */
  pid: number;
  permissionFlag: string | undefined;
  permissionActive: boolean;
  addressSpaceLimitMb: number | undefined;
  memoryLimitMb: number;
  nodeVersion: string;
  summary: string;
}

interface PendingJob {
  id: number;
  job: RunJob;
  resolve: (r: RunResult) => void;
  settled: boolean;
  onAbort?: () => void;
}

interface Runner {
  proc: ChildProcess;
  command: RunnerCommand;
  memoryLimitMb: number;
  state: 'starting' | 'idle' | 'busy' | 'dead';
  hello?: HelloMessage;
  knownBundles: Map<string, true>;
  jobsRun: number;
  current?: PendingJob;
  startedAt: number;
  stopWatch?: () => void;
  watchdog?: NodeJS.Timeout;
  startTimer?: NodeJS.Timeout;
  stderrTail: string;
  /** Set when we killed it on purpose: the exit then is not a crash. */
  retiring?: string;
}


function defaultSize(): number {
  const cores = typeof availableParallelism === 'function' ? availableParallelism() : cpus().length;
  return Math.max(1, Math.min(2, cores));
}


/** The most telling line of a runner's stderr: the first error line, else the last line that is not Node's version banner. */
function telling(stderr: string): string | undefined {
  const lines = stderr.split('\n').map((l) => l.trim()).filter((l) => l && !/^Node\.js v\d/.test(l));
  const error = lines.find((l) => /^(\w*Error|FATAL ERROR)\b|Error:/.test(l));
  return (error ?? lines[lines.length - 1])?.slice(0, 300);
}

/** A crash explained from the exit and the runner's stderr. */
function describeCrash(code: number | null, signal: NodeJS.Signals | null, stderr: string, memoryLimitMb: number): string {
  const how = signal ? `signal ${signal}` : `exit code ${code}`;
  const heap = /heap out of memory|Reached heap limit|invalid table size|Invalid array length|Fatal process out of memory|allocation failed/i.test(stderr);
  if (heap || signal === 'SIGABRT' || signal === 'SIGSEGV' || signal === 'SIGTRAP' || code === 134) {
    return `the runner process died (${how}, likely out of memory: the op allocated beyond the ${memoryLimitMb} MiB memory limit)`;
  }
  const line = telling(stderr);
  return `the runner process died (${how})${line ? `: ${line}` : ''}`;
}

export class RunnerPool {
  readonly size: number;
  readonly stats: PoolStats = {
    spawned: 0, warmJobs: 0, jobsStarted: 0, jobsFinished: 0, bundlesSent: 0,
    timeouts: 0, crashes: 0, memoryKills: 0, cancelled: 0,
  };

  private readonly runners = new Set<Runner>();
  private readonly queue: PendingJob[] = [];
  private readonly log: (line: string) => void;
  private readonly childScriptOption?: string;
  private readonly engineScriptOption?: string;
  private engineCode?: string;
  private nextId = 1;
  private disposed = false;
  private usePermission = true;
  private readonly coverage: boolean;
  private useAddressLimit = true;
  private startFailures = 0;
  private lastHello?: { hello: HelloMessage; command: RunnerCommand; memoryLimitMb: number };

  constructor(opts: RunnerPoolOptions = {}) {
    this.size = Math.max(1, Math.floor(opts.size ?? defaultSize()));
    this.childScriptOption = opts.childScript;
    this.engineScriptOption = opts.engineScript;
    this.log = opts.log ?? (() => undefined);
    this.coverage = opts.coverage === true;
    if (this.coverage) this.usePermission = false;
  }

  /** The isolation the latest runner reported from inside, or undefined before any started. */
  isolation(): IsolationReport | undefined {
    const last = this.lastHello;
    if (!last) return undefined;
    const limit = last.command.addressSpaceLimitMb;
    const parts = [last.hello.isolation, `heap limit ${last.memoryLimitMb} MiB`];
    parts.push(limit ? `address space limit ${limit} MiB` : 'no address-space limit (prlimit not available)');
    parts.push(`resident memory watched (limit ${last.memoryLimitMb + RESIDENT_HEADROOM_MB} MiB)`);
    return {
      pid: last.hello.pid,
      permissionFlag: last.command.permissionFlag,
      permissionActive: last.hello.permissionActive,
      addressSpaceLimitMb: limit,
      memoryLimitMb: last.memoryLimitMb,
      nodeVersion: last.hello.nodeVersion,
      summary: parts.join('; '),
    };
  }

  /** Starts runners ahead of the first job so it does not pay the cold start. */
  warm(memoryLimitMb: number): void {
    while (!this.disposed && this.runners.size < this.size) {
      if (!this.spawnRunner(memoryLimitMb)) break;
    }
  }

  /** Runs one op's check; never rejects. */
  run(job: RunJob): Promise<RunResult> {
    return new Promise<RunResult>((resolve) => {
      if (this.disposed) {
        resolve({ error: 'the checker was closed before this op ran', elapsedMs: 0, cause: 'closed' });
        return;
      }
      if (job.signal?.aborted) {
        this.stats.cancelled++;
        resolve({ error: 'cancelled', elapsedMs: 0, cause: 'cancelled' });
        return;
      }
      const pending: PendingJob = { id: this.nextId++, job, resolve, settled: false };
      if (job.signal) {
        pending.onAbort = () => this.cancel(pending);
        job.signal.addEventListener('abort', pending.onAbort, { once: true });
      }
      this.queue.push(pending);
      this.dispatch();
    });
  }

  /** Kills every runner and fails queued jobs. */
  async dispose(): Promise<void> {
    if (this.disposed) return;
    this.disposed = true;
    for (const pending of this.queue.splice(0)) {
      this.settle(pending, { error: 'the checker was closed before this op ran', elapsedMs: 0, cause: 'closed' });
    }
    const exits: Promise<void>[] = [];
    for (const runner of this.runners) {
      if (runner.current) this.settle(runner.current, { error: 'the checker was closed while this op ran', elapsedMs: 0, cause: 'closed' });
      exits.push(this.kill(runner, 'closed'));
    }
    await Promise.all(exits);
  }

  // ---- internals ----

  private settle(pending: PendingJob, result: RunResult): void {
    if (pending.settled) return;
    pending.settled = true;
    if (pending.onAbort) pending.job.signal?.removeEventListener('abort', pending.onAbort);
    pending.resolve(result);
  }

  private cancel(pending: PendingJob): void {
    if (pending.settled) return;
    this.stats.cancelled++;
    const queued = this.queue.indexOf(pending);
    if (queued >= 0) {
      this.queue.splice(queued, 1);
      this.settle(pending, { error: 'cancelled', elapsedMs: 0, cause: 'cancelled' });
      return;
    }
    for (const runner of this.runners) {
      if (runner.current === pending) {
        this.finishJob(runner, { error: 'cancelled', elapsedMs: Date.now() - runner.startedAt, cause: 'cancelled' });
        void this.kill(runner, 'cancelled');
        this.replenish(runner.memoryLimitMb);
        return;
      }
    }
  }

  private resolveAssets(): { childScript: string; engineCode: string } | string {
    const childScript = this.childScriptOption ?? findBuiltAsset(CHILD_SCRIPT_NAME);
    if (!childScript) return `the runner script ${CHILD_SCRIPT_NAME} was not found next to dist/ (run npm run build)`;
    if (this.engineCode === undefined) {
      const engineScript = this.engineScriptOption ?? findBuiltAsset(ENGINE_SCRIPT_NAME);
      if (!engineScript) return `the check engine ${ENGINE_SCRIPT_NAME} was not found next to dist/ (run npm run build)`;
      try {
        this.engineCode = readFileSync(engineScript, 'utf8');
      } catch (e) {
        return `the check engine could not be read: ${(e as Error).message}`;
      }
    }
    return { childScript, engineCode: this.engineCode };
  }

  private failQueued(message: string): void {
    for (const pending of this.queue.splice(0)) this.settle(pending, { error: message, elapsedMs: 0, cause: 'runner' });
  }

  private spawnRunner(memoryLimitMb: number): Runner | undefined {
    const assets = this.resolveAssets();
    if (typeof assets === 'string') {
      this.failQueued(assets);
      return undefined;
    }
    const command = runnerCommand({
      childScript: assets.childScript,
      memoryLimitMb,
      usePermission: this.usePermission,
      useAddressLimit: this.useAddressLimit,
      extraArgs: this.coverage ? [COVERAGE_RUNNER_ARG] : undefined,
    });
    let proc: ChildProcess;
    try {
      // stdio: never inherited (a runner must not write into the language server's stdout);
      // stderr is read only to explain a crash.
      proc = spawn(command.command, command.args, {
        env: command.env,
        stdio: ['ignore', 'ignore', 'pipe', 'ipc'],
        windowsHide: true,
      });
    } catch (e) {
      this.failQueued(`the runner process could not start: ${(e as Error).message}`);
      return undefined;
    }
    this.stats.spawned++;
    const runner: Runner = {
      proc, command, memoryLimitMb, state: 'starting', knownBundles: new Map(), jobsRun: 0,
      startedAt: Date.now(), stderrTail: '',
    };
    this.runners.add(runner);
    proc.stderr?.setEncoding('utf8');
    proc.stderr?.on('data', (chunk: string) => {
      runner.stderrTail = (runner.stderrTail + chunk).slice(-STDERR_TAIL_CHARS);
    });
    proc.on('message', (m: unknown) => this.onMessage(runner, m as ChildMessage, assets.engineCode));
    proc.on('exit', (code, signal) => this.onExit(runner, code, signal));
    proc.on('error', (e) => {
      runner.stderrTail += `\n${e.message}`;
      // A process that never started emits no 'exit': treat the error as its end.
      if (proc.pid === undefined && runner.state !== 'dead') this.onExit(runner, null, null);
    });
    runner.startTimer = setTimeout(() => {
      if (runner.state === 'starting') {
        this.log(`runner ${proc.pid ?? '?'} did not start within ${START_TIMEOUT_MS} ms; killing it`);
        proc.kill('SIGKILL');
      }
    }, START_TIMEOUT_MS);
    runner.startTimer.unref();
    return runner;
  }

  private onMessage(runner: Runner, message: ChildMessage, engineCode: string): void {
    if (message.type === 'hello') {
      if (runner.startTimer) clearTimeout(runner.startTimer);
      runner.hello = message;
      runner.state = 'idle';
      this.startFailures = 0;
      this.lastHello = { hello: message, command: runner.command, memoryLimitMb: runner.memoryLimitMb };
      if (runner.command.permissionFlag && !message.permissionActive) {
        this.log(`runner started with ${runner.command.permissionFlag} but reports the permission model inactive`);
      }
      runner.proc.send({ type: 'init', engineCode });
      this.hold(runner, false);
      this.dispatch();
      return;
    }
    const pending = runner.current;
    if (!pending || message.id !== pending.id) return;
    if (message.type === 'missing-bundle') {
      runner.knownBundles.delete(pending.job.bundleKey);
      this.sendJob(runner, pending);
      return;
    }
    this.onResult(runner, message);
  }

  private onResult(runner: Runner, message: ResultMessage): void {
    const result = runResultFromReply(message);
    if (!message.ok && message.timedOut) this.stats.timeouts++;
    this.finishJob(runner, result);
    if (message.ok === false && message.timedOut) {
      // A context stopped mid-run may leave the heap full of what the loop built; a new
      // runner costs one cold start and guarantees the next op a clean process.
      void this.kill(runner, 'timed out');
      this.replenish(runner.memoryLimitMb);
      return;
    }
    runner.state = 'idle';
    this.hold(runner, false);
    // Next turn: the caller may react to this result by cancelling queued jobs (a module that
    // fails at load), and a job that never starts costs nothing while a started one costs a runner.
    setImmediate(() => this.dispatch());
  }

  private finishJob(runner: Runner, result: RunResult): void {
    const pending = runner.current;
    runner.current = undefined;
    if (runner.watchdog) clearTimeout(runner.watchdog);
    runner.watchdog = undefined;
    runner.stopWatch?.();
    runner.stopWatch = undefined;
    if (pending) {
      this.stats.jobsFinished++;
      this.settle(pending, result);
    }
  }

  private onExit(runner: Runner, code: number | null, signal: NodeJS.Signals | null): void {
    const wasStarting = runner.state === 'starting';
    runner.state = 'dead';
    this.runners.delete(runner);
    if (runner.startTimer) clearTimeout(runner.startTimer);
    if (runner.current) {
      if (!runner.retiring) this.stats.crashes++;
      const message = describeCrash(code, signal, runner.stderrTail, runner.memoryLimitMb);
      this.finishJob(runner, { error: message, elapsedMs: Date.now() - runner.startedAt, cause: 'crash' });
    }
    if (this.disposed) return;
    if (wasStarting && !runner.retiring) {
      this.startFailures++;
      const why = telling(runner.stderrTail) ?? (signal ? `signal ${signal}` : `exit code ${code}`);
      const hasPermission = runner.command.permissionFlag !== undefined && this.usePermission;
      const hasAddressLimit = runner.command.addressSpaceLimitMb !== undefined && this.useAddressLimit;
      // Give up the optional limits one at a time, the one the error names first. A runtime
      // that refuses the flag says "bad option"; one that reserves a large virtual-memory cage
      // (an editor's Electron) dies opaquely under the address-space limit.
      const blamesPermission = /permission|bad option/i.test(runner.stderrTail);
      if (hasPermission && (blamesPermission || !hasAddressLimit)) {
        this.usePermission = false;
        this.log(`runner did not start with ${runner.command.permissionFlag} (${why}); running without the permission model`);
      } else if (hasAddressLimit) {
        this.useAddressLimit = false;
        this.log(`runner did not start under an address-space limit (${why}); relying on the memory poll`);
      } else if (this.startFailures >= MAX_START_FAILURES) {
        this.failQueued(`the runner process could not start: ${why}`);
        return;
      }
    }
    this.dispatch();
  }

  /** Starts a runner in place of one that was killed, so the pool stays warm. */
  private replenish(memoryLimitMb: number): void {
    if (this.disposed) return;
    if (this.runners.size < this.size) this.spawnRunner(memoryLimitMb);
  }

  private kill(runner: Runner, reason: string): Promise<void> {
    runner.retiring = runner.retiring ?? reason;
    runner.stopWatch?.();
    if (runner.state === 'dead' || runner.proc.exitCode !== null || runner.proc.signalCode !== null) {
      runner.state = 'dead';
      this.runners.delete(runner);
      return Promise.resolve();
    }
    // Leave the pool now, so dispatch never hands this runner another job.
    this.runners.delete(runner);
    return new Promise<void>((resolve) => {
      runner.proc.once('exit', () => resolve());
      // An idle runner is unref'd; without this the caller's event loop could end before the
      // exit event and leave this promise (and dispose()) pending forever.
      runner.proc.ref();
      runner.proc.kill('SIGKILL');
    });
  }

  /** Keeps the caller's event loop alive only while a runner works (an idle pool never blocks exit). */
  private hold(runner: Runner, busy: boolean): void {
    const handles = [runner.proc, runner.proc.channel, runner.proc.stderr] as Array<{ ref?: () => void; unref?: () => void } | null | undefined>;
    for (const h of handles) {
      if (busy) h?.ref?.();
      else h?.unref?.();
    }
  }

  private dispatch(): void {
    dispatching: while (!this.disposed && this.queue.length > 0) {
      const next = this.queue[0];
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
      this.queue.shift();
      this.startJob(runner, next);
    }
  }

  private startJob(runner: Runner, pending: PendingJob): void {
    runner.state = 'busy';
    runner.current = pending;
    runner.startedAt = Date.now();
    this.stats.jobsStarted++;
    if (runner.jobsRun > 0) this.stats.warmJobs++;
    runner.jobsRun++;
    this.hold(runner, true);
    const { settings } = pending.job;
    const limitMs = settings.timeLimitMs;
    runner.watchdog = setTimeout(() => {
      if (runner.current !== pending) return;
      this.stats.timeouts++;
      this.finishJob(runner, {
        error: `timed out after ${limitMs} ms (the runner did not stop by itself and was killed)`,
        elapsedMs: Date.now() - runner.startedAt,
        cause: 'timeout',
      });
      void this.kill(runner, 'watchdog');
      this.replenish(runner.memoryLimitMb);
    }, limitMs + KILL_GRACE_MS);
    const pid = runner.proc.pid;
    if (pid !== undefined) {
      const residentLimit = runner.memoryLimitMb + RESIDENT_HEADROOM_MB;
      runner.stopWatch = watchMemory(pid, residentLimit, (usedMb) => {
        if (runner.current !== pending) return;
        this.stats.memoryKills++;
        this.finishJob(runner, {
          error: `the op used ${Math.round(usedMb)} MiB of memory, over the limit of ${residentLimit} MiB (memory limit ${runner.memoryLimitMb} MiB plus ${RESIDENT_HEADROOM_MB} MiB for the runtime); the runner was stopped`,
          elapsedMs: Date.now() - runner.startedAt,
          cause: 'memory',
        });
        void this.kill(runner, 'memory');
        this.replenish(runner.memoryLimitMb);
      });
    }
    this.sendJob(runner, pending);
  }

  private sendJob(runner: Runner, pending: PendingJob): void {
    const { job } = pending;
    const known = runner.knownBundles.has(job.bundleKey);
    if (known) runner.knownBundles.delete(job.bundleKey);
    runner.knownBundles.set(job.bundleKey, true);
    while (runner.knownBundles.size > KNOWN_BUNDLES_PER_RUNNER) {
      const oldest = runner.knownBundles.keys().next().value;
      if (oldest === undefined) break;
      runner.knownBundles.delete(oldest);
    }
    if (!known) this.stats.bundlesSent++;
    const message: JobMessage = {
      type: 'job',
      id: pending.id,
      bundleKey: job.bundleKey,
      bundleCode: known ? undefined : job.bundleCode,
      requestJson: JSON.stringify({ op: job.op, settings: job.settings }),
      seed: job.op.seed ?? job.settings.seed,
      // vm accepts only a positive integer timeout.
      timeLimitMs: Math.max(1, Math.floor(job.settings.timeLimitMs)),
      outputLimitChars: OUTPUT_LIMIT_CHARS,
    };
    runner.proc.send(message);
  }
}
