// One supervised sandbox process, for the runner pool and the isolated runner alike: spawned with
// no stdio of ours, its stderr tail kept to explain a crash, its end reported once, a watchdog and
// a memory watch per job, and a kill that waits for the exit.
import { spawn, type ChildProcess } from 'node:child_process';
import { watchMemory } from './memoryWatch';

/**
 * Time the parent waits beyond the op's time limit before it kills the process, in ms. The
 * isolated interpreter's own time limit normally fires first; the process runner has none inside
 * (child.ts says why: the engine stops itself at 90 % of the limit, and user code that runs past
 * it ends here). The grace covers compiling a large bundle, creating the context and the message
 * round trip (a few ms to ~100 ms measured), with margin for a loaded 2-core machine.
 */
export const KILL_GRACE_MS = 1500;

/**
 * The process runner's grace beyond the time limit: a quarter of the limit, at least 250 ms and
 * at most KILL_GRACE_MS. It is how a runaway op ends there (no timeout inside, child.ts), so it
 * must not be much longer than the limit a user set: a file's total time cap (5 × the per-op
 * limit, checker) would otherwise end before a single runaway op does. 250 ms covers the round
 * trip and a first bundle compile of a few hundred kB (our choice, from the figures above).
 */
export function runnerKillGraceMs(timeLimitMs: number): number {
  return Math.min(KILL_GRACE_MS, Math.max(250, 0.25 * timeLimitMs));
}

/** Characters of a process's stderr kept to explain a crash. */
export const STDERR_TAIL_CHARS = 4096;

/** How to start the process: the executable, its arguments and its whole environment. */
export interface ProcessSpec {
  command: string;
  args: string[];
  env: NodeJS.ProcessEnv;
}

export interface ProcessHandlers {
  onMessage(message: unknown): void;
  /** Called once, when the process ended or never started (code and signal null then). */
  onExit(code: number | null, signal: NodeJS.Signals | null): void;
}

/** The most telling line of a process's stderr: the first error line, else the last line that is not Node's version banner. */
export function tellingLine(stderr: string): string | undefined {
  const lines = stderr
    .split('\n')
    .map((l) => l.trim())
    .filter((l) => l && !/^Node\.js v\d/.test(l));
  const error = lines.find((l) => /^(\w*Error|FATAL ERROR)\b|Error:/.test(l));
  return (error ?? lines[lines.length - 1])?.slice(0, 300);
}

export class SupervisedProcess {
  /** Set when we stop the process on purpose: its exit then is not a crash. */
  killReason: string | undefined;
  private stderr = '';
  private ended = false;
  private watchdog: NodeJS.Timeout | undefined;
  private stopWatch: (() => void) | undefined;

  private constructor(
    private readonly proc: ChildProcess,
    handlers: ProcessHandlers,
  ) {
    proc.stderr?.setEncoding('utf8');
    proc.stderr?.on('data', (chunk: string) => {
      this.stderr = (this.stderr + chunk).slice(-STDERR_TAIL_CHARS);
    });
    proc.on('message', (m: unknown) => handlers.onMessage(m));
    const end = (code: number | null, signal: NodeJS.Signals | null): void => {
      if (this.ended) return;
      this.ended = true;
      this.unguard();
      handlers.onExit(code, signal);
    };
    proc.on('exit', end);
    proc.on('error', (e) => {
      this.stderr = (this.stderr + `\n${e.message}`).slice(-STDERR_TAIL_CHARS);
      // A process that never started emits no 'exit': the error is its end.
      if (proc.pid === undefined) end(null, null);
    });
  }

  /** Starts a process; a message instead when spawning throws. */
  static start(spec: ProcessSpec, handlers: ProcessHandlers): SupervisedProcess | string {
    try {
      // stdio: never inherited (a sandbox process must not write into the language server's
      // stdout); stderr is read only to explain a crash.
      const proc = spawn(spec.command, spec.args, { env: spec.env, stdio: ['ignore', 'ignore', 'pipe', 'ipc'], windowsHide: true });
      return new SupervisedProcess(proc, handlers);
    } catch (e) {
      return (e as Error).message;
    }
  }

  get pid(): number | undefined {
    return this.proc.pid;
  }

  get stderrTail(): string {
    return this.stderr;
  }

  get alive(): boolean {
    return !this.ended && this.proc.exitCode === null && this.proc.signalCode === null;
  }

  send(message: object): void {
    if (this.alive) this.proc.send(message);
  }

  /** Keeps the caller's event loop alive only while a job runs (an idle process never blocks exit). */
  hold(busy: boolean): void {
    const handles = [this.proc, this.proc.channel, this.proc.stderr] as Array<{ ref?: () => void; unref?: () => void } | null | undefined>;
    for (const h of handles) {
      if (busy) h?.ref?.();
      else h?.unref?.();
    }
  }

  /**
   * Watches one job: `onTimeout` after the time limit plus `graceMs`, `onMemory` once the
   * resident memory passes `residentMb`. Both stop with unguard() or the end of the process.
   */
  guard(timeLimitMs: number, graceMs: number, residentMb: number, onTimeout: () => void, onMemory: (usedMb: number) => void): void {
    this.unguard();
    this.watchdog = setTimeout(onTimeout, timeLimitMs + graceMs);
    const pid = this.proc.pid;
    if (pid !== undefined) this.stopWatch = watchMemory(pid, residentMb, onMemory);
  }

  unguard(): void {
    if (this.watchdog) clearTimeout(this.watchdog);
    this.watchdog = undefined;
    this.stopWatch?.();
    this.stopWatch = undefined;
  }

  /** Kills the process on purpose; resolves when it has exited. */
  kill(reason: string): Promise<void> {
    this.killReason ??= reason;
    this.unguard();
    if (!this.alive) return Promise.resolve();
    return new Promise<void>((resolve) => {
      this.proc.once('exit', () => resolve());
      // An idle process is unref'd; without this the caller's event loop could end before the
      // exit event and leave this promise (and dispose()) pending forever.
      this.proc.ref();
      this.proc.kill('SIGKILL');
    });
  }

  /** Kills a process that never said it was ready, without calling it on purpose: its exit counts as a failed start. */
  abandon(): void {
    this.proc.kill('SIGKILL');
  }

  /** Why the process died under a job, from its exit and stderr; `what` names it ("runner", "interpreter"). */
  crashText(what: string, code: number | null, signal: NodeJS.Signals | null, memoryLimitMb: number): string {
    const how = signal ? `signal ${signal}` : code === null ? 'it did not start' : `exit code ${code}`;
    const heap = /heap out of memory|Reached heap limit|invalid table size|Invalid array length|Fatal process out of memory|allocation failed/i.test(this.stderr);
    if (heap || signal === 'SIGABRT' || signal === 'SIGSEGV' || signal === 'SIGTRAP' || code === 134) {
      return `the ${what} process died (${how}, likely out of memory: the op allocated beyond the ${memoryLimitMb} MiB memory limit)`;
    }
    const line = tellingLine(this.stderr);
    return `the ${what} process died (${how})${line ? `: ${line}` : ''}`;
  }
}
