// The job queue both kinds of runner share: jobs wait in order, each settles exactly once, a
// caller's abort signal cancels a waiting job at once and a started one through its runner, and
// the abort listener is removed when the job settles (a long-lived signal must not collect them).
import type { RunFailure, RunJob, RunResult, RunnerStats } from './jobTypes';

/** A job the queue holds: waiting, or handed to a runner and not yet settled. */
export interface QueuedJob {
  readonly id: number;
  readonly job: RunJob;
  /** When a runner took it (Date.now()), for the elapsed time of a failure. */
  startedAt: number;
}

interface Entry extends QueuedJob {
  settled: boolean;
  resolve: (r: RunResult) => void;
  onAbort?: () => void;
}

/** The failure of a job that never ran because its runner was disposed (a fresh object: callers may amend it). */
export function closedBefore(): RunFailure {
  return { error: 'the checker was closed before this op ran', elapsedMs: 0, cause: 'closed' };
}

/** The failure of a job whose runner was disposed while it ran. */
export function closedWhile(job: QueuedJob): RunFailure {
  return { error: 'the checker was closed while this op ran', elapsedMs: Date.now() - job.startedAt, cause: 'closed' };
}

export class JobQueue {
  private readonly waiting: Entry[] = [];
  private nextId = 1;
  private closed = false;

  /**
   * `cancelStarted` is called when the signal of a job a runner already took aborts: the runner
   * settles it (with `cancelled`) and stops whatever runs it.
   */
  constructor(
    private readonly stats: RunnerStats,
    private readonly cancelStarted: (job: QueuedJob) => void,
  ) {}

  get isClosed(): boolean {
    return this.closed;
  }

  get length(): number {
    return this.waiting.length;
  }

  /** Queues one job; the promise never rejects. The caller then lets its runners take jobs. */
  submit(job: RunJob): Promise<RunResult> {
    return new Promise<RunResult>((resolve) => {
      if (this.closed) return resolve(closedBefore());
      if (job.signal?.aborted) {
        this.stats.cancelled++;
        return resolve({ error: 'cancelled', elapsedMs: 0, cause: 'cancelled' });
      }
      const entry: Entry = { id: this.nextId++, job, startedAt: 0, settled: false, resolve };
      const signal = job.signal;
      if (signal) {
        entry.onAbort = () => this.abort(entry);
        signal.addEventListener('abort', entry.onAbort, { once: true });
      }
      this.waiting.push(entry);
    });
  }

  /** The next waiting job, left in the queue. */
  peek(): QueuedJob | undefined {
    return this.waiting[0];
  }

  /** Takes the next waiting job for a runner and marks when it started. */
  take(): QueuedJob | undefined {
    const next = this.waiting.shift();
    if (next) next.startedAt = Date.now();
    return next;
  }

  /** Settles a job once (later calls do nothing) and drops its abort listener. */
  settle(job: QueuedJob, result: RunResult): void {
    const entry = job as Entry;
    if (entry.settled) return;
    entry.settled = true;
    if (entry.onAbort) entry.job.signal?.removeEventListener('abort', entry.onAbort);
    entry.resolve(result);
  }

  /** Fails every waiting job with the same message (a runner that cannot start). */
  failWaiting(error: string): void {
    for (const entry of this.waiting.splice(0)) this.settle(entry, { error, elapsedMs: 0, cause: 'runner' });
  }

  /** No job is accepted from now on; waiting ones fail as closed. */
  close(): void {
    this.closed = true;
    for (const entry of this.waiting.splice(0)) this.settle(entry, closedBefore());
  }

  private abort(entry: Entry): void {
    if (entry.settled) return;
    this.stats.cancelled++;
    const at = this.waiting.indexOf(entry);
    if (at >= 0) {
      this.waiting.splice(at, 1);
      this.settle(entry, { error: 'cancelled', elapsedMs: 0, cause: 'cancelled' });
      return;
    }
    this.cancelStarted(entry);
  }
}
