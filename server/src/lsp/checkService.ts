// Runs checks for the language server: one Checker for the whole server, the latest result of
// every op per document, which ops are running, cancellation of stale runs, and reuse of a
// result when neither the text, the settings nor any other file of its bundle changed since it
// was computed (the bundle's inputs are remembered, so a saved helper file re-checks its users).
// A result drawn with every step picture (settings.stepScans 'all') also serves a plain request.

import { createHash } from 'node:crypto';
import { statSync } from 'node:fs';
import { basename } from 'node:path';
import { Checker } from '../core/checker';
import { DEFAULT_SETTINGS, type CheckSettings } from '../engine/settings';
import type { OpResult } from '../model/types';
import { HeapTrim } from './heapTrim';
import { settingsKey } from './settings';
import { UNTRUSTED_REASON } from './opStanding';
import type { ReasonCode } from './protocol';

/** A result, the (text, settings) it was computed for, and the other input files' stamps then. */
interface StoredResult {
  /** Text, settings but settings.stepScans, and coverage: what the verdict depends on. */
  key: string;
  /** The settings.stepScans its run drew pictures with (undefined: the default). */
  stepScans: CheckSettings['stepScans'];
  /** A pictures-only re-check of this result ended otherwise and was dropped: it is not tried again. */
  picturesTried?: boolean;
  result: OpResult;
  /** Size and modification time of every other file the bundle read, by path. */
  inputs: ReadonlyMap<string, string>;
  /** Stored results are numbered, so a client can tell a new result from one pushed again. */
  seq: number;
}

/** A file's size and modification time: what tells that it changed on disk. */
function stampOf(path: string): string {
  try {
    const st = statSync(path);
    return `${st.size}:${st.mtimeMs}`;
  } catch {
    return 'missing';
  }
}

function inputsUnchanged(inputs: ReadonlyMap<string, string>): boolean {
  for (const [path, stamp] of inputs) if (stampOf(path) !== stamp) return false;
  return true;
}

/** Why a run did not happen: the message is shown to the user as is, the code is for programs. */
export class CheckRefused extends Error {
  constructor(
    message: string,
    readonly code: ReasonCode,
  ) {
    super(message);
  }
}

export interface FileCheckRequest {
  uri: string;
  fsPath: string;
  text: string;
  settings: CheckSettings;
  /** Display names of the ops to check; undefined = every op of the file. */
  forwards?: string[];
  /** Ops of the file (display names) that the run will cover when `forwards` is undefined. */
  knownForwards: string[];
  /** Run even when a result for the same text and settings exists. */
  force?: boolean;
  /** Cancels this run (a client's cancellation); newer edits cancel it too. */
  signal?: AbortSignal;
  /** Record which code each check ran (gradientProbe.showUnreached); default true. */
  coverage?: boolean;
  /**
   * A re-check that only adds step pictures (same seed and inputs, so the same verdict): it runs
   * only when every wanted op's stored result is for this same text, settings (pictures aside)
   * and bundle inputs, else resolves with no result; and its result replaces the stored one only
   * when it ends the same way (a run the time limit stopped on a loaded machine, or that crashed,
   * says nothing new about the code), else it is dropped, the stored one stays and is not
   * re-checked for pictures again.
   */
  picturesOnly?: boolean;
}

/** Whether a re-check ended as the result it repeats did: the same verdict, stopped at the time limit or not. */
function endsAlike(before: OpResult | undefined, after: OpResult): boolean {
  return before !== undefined && before.verdict === after.verdict && (before.stoppedAtTimeLimit === undefined) === (after.stoppedAtTimeLimit === undefined);
}

/**
 * Whether a result drawn with `stored` step pictures serves a request for `wanted`: the pictures
 * change no verdict or figure, so a result with every picture ('all') serves any request, and a
 * result with fewer never serves a request for all of them.
 */
function picturesServe(stored: CheckSettings['stepScans'], wanted: CheckSettings['stepScans']): boolean {
  return stored === wanted || stored === 'all';
}

export class CheckService {
  private checker: Checker | undefined;
  private readonly results = new Map<string, Map<string, StoredResult>>();
  private readonly running = new Map<string, Map<string, number>>();
  private readonly controllers = new Map<string, Set<AbortController>>();
  /** The other files each document's last bundle read (absolute paths). */
  private readonly bundleInputs = new Map<string, string[]>();
  private trusted: boolean;
  private started = 0;
  private storedCount = 0;
  private readonly heap = new HeapTrim();

  constructor(
    options: { trusted: boolean; workers?: number },
    /** Called whenever results or running states of a document change. */
    private readonly onChange: (uri: string) => void,
    private readonly log: (line: string) => void,
  ) {
    this.trusted = options.trusted;
    this.workers = options.workers;
  }

  private readonly workers: number | undefined;

  /** Op checks started so far (a reused result starts none). */
  get opsRun(): number {
    return this.started;
  }

  get isTrusted(): boolean {
    return this.trusted;
  }

  /** Trust withdrawn: stop everything that runs user code at once. */
  setTrusted(trusted: boolean): void {
    this.trusted = trusted;
    if (!trusted) for (const uri of [...this.controllers.keys()]) this.cancel(uri);
  }

  /** The text changed: results computed for older text stay visible but their runs stop. */
  cancel(uri: string): void {
    for (const controller of this.controllers.get(uri) ?? []) controller.abort();
  }

  latest(uri: string, forward: string): OpResult | undefined {
    return this.results.get(uri)?.get(forward)?.result;
  }

  /** The number of the op's latest result (see StoredResult.seq). */
  latestSeq(uri: string, forward: string): number | undefined {
    return this.results.get(uri)?.get(forward)?.seq;
  }

  isRunning(uri: string, forward: string): boolean {
    return (this.running.get(uri)?.get(forward) ?? 0) > 0;
  }

  knownUris(): string[] {
    return [...new Set([...this.results.keys(), ...this.running.keys()])];
  }

  /** Drops what is known about a document whose file is gone. */
  forget(uri: string): void {
    this.cancel(uri);
    this.results.delete(uri);
    this.running.delete(uri);
    this.bundleInputs.delete(uri);
  }

  /** Documents whose last bundle read the given file (not counting the file itself). */
  dependentsOf(fsPath: string): string[] {
    const out: string[] = [];
    for (const [uri, inputs] of this.bundleInputs) if (uri !== fsPath && inputs.includes(fsPath)) out.push(uri);
    return out;
  }

  /**
   * Checks the requested ops of one document. Reuses a stored result when text and settings
   * are unchanged (unless forced). Resolves with the results of the requested ops in file
   * order; a cancelled run resolves with what finished before it stopped.
   */
  async check(request: FileCheckRequest): Promise<OpResult[]> {
    // Untrusted: only the isolated interpreter may run code (the session decides when).
    if (!this.trusted && request.settings.isolation !== 'interpreter') throw new CheckRefused(UNTRUSTED_REASON, 'untrusted');
    const { stepScans, ...verdictSettings } = request.settings;
    const key = `${hashText(request.text)}|${settingsKey(verdictSettings)}|${request.coverage === false ? 'no-coverage' : 'coverage'}`;
    // Unique names: a client may name an op twice (a file and its op both selected).
    const wanted = [...new Set(request.forwards ?? request.knownForwards)];
    const stored = this.results.get(request.uri);
    const current = (f: string): boolean => {
      const entry = stored?.get(f);
      return entry?.key === key && inputsUnchanged(entry.inputs);
    };
    if (request.picturesOnly && (wanted.length === 0 || !wanted.every((f) => current(f) && !stored!.get(f)!.picturesTried))) return [];
    const reusable = !request.force && wanted.length > 0 && wanted.every((f) => current(f) && picturesServe(stored!.get(f)!.stepScans, stepScans));
    if (reusable) return wanted.map((f) => stored!.get(f)!.result);

    this.started += wanted.length;
    const label = `${basename(request.fsPath)} [${wanted.join(', ')}]${request.force ? ' (forced)' : ''}`;
    this.log(`check ${label}: started`);
    const controller = new AbortController();
    const onOuterAbort = (): void => controller.abort();
    request.signal?.addEventListener('abort', onOuterAbort);
    let controllers = this.controllers.get(request.uri);
    if (!controllers) this.controllers.set(request.uri, (controllers = new Set()));
    controllers.add(controller);
    this.markRunning(request.uri, wanted, +1);
    const finished = new Set<string>();
    const collected: OpResult[] = [];
    /** The number each op's result of this run was stored under. */
    const seqs = new Map<string, number>();
    // Stamps of the bundle's other inputs, taken when it was built (before any op ran).
    let inputs: ReadonlyMap<string, string> = new Map();
    const onBundle = (paths: string[]): void => {
      const others = paths.filter((p) => p !== request.fsPath);
      this.bundleInputs.set(request.uri, others);
      inputs = new Map(others.map((p) => [p, stampOf(p)] as const));
    };
    const accept = (result: OpResult): void => {
      if (controller.signal.aborted) return;
      const forward = result.forward ?? '';
      if (request.forwards && !request.forwards.includes(forward)) return; // `filter` is a substring match
      const before = this.latest(request.uri, forward);
      if (request.picturesOnly && !endsAlike(before, result)) {
        this.log(`check ${label}: ${forward} ended ${result.verdict} where its result was ${before?.verdict ?? 'none'}; that result stays`);
        const entry = this.results.get(request.uri)?.get(forward);
        if (entry) entry.picturesTried = true;
        return;
      }
      collected.push(result);
      seqs.set(forward, this.store(request.uri, forward, { key, stepScans, result, inputs }));
      if (wanted.includes(forward) && !finished.has(forward)) {
        finished.add(forward);
        this.markRunning(request.uri, [forward], -1);
      }
      this.onChange(request.uri);
    };
    try {
      const checker = this.getChecker();
      // The Checker's filter is a substring of the forward name: it narrows a one-op run,
      // and `accept` drops the other ops it lets through.
      const filter = request.forwards && wanted.length === 1 ? wanted[0]! : undefined;
      const results = await checker.checkFile(request.fsPath, {
        text: request.text,
        signal: controller.signal,
        settings: request.settings,
        onResult: accept,
        onBundle,
        coverage: request.coverage !== false,
        // Verdicts show at once; an op's coverage (hints, hover line) follows when its run ends.
        onCoverage: (result) => {
          const forward = result.forward ?? '';
          const seq = seqs.get(forward);
          // A newer run's result (a re-check for the report's step picture) stays: it was not replaced by this run's coverage.
          if (controller.signal.aborted || seq === undefined || this.latestSeq(request.uri, forward) !== seq) return;
          // The same run's result with its coverage: the same number, so it is not recorded twice.
          this.store(request.uri, forward, { key, stepScans, result, inputs }, seq);
          this.onChange(request.uri);
        },
        ...(filter !== undefined ? { filter } : {}),
      });
      // Results not seen through onResult (a Checker that reports only at the end).
      for (const result of results) {
        if (!collected.includes(result) && !finished.has(result.forward ?? '')) accept(result);
      }
    } catch (err) {
      if (!controller.signal.aborted) {
        this.log(`check of ${request.fsPath} failed: ${err instanceof Error ? (err.stack ?? err.message) : String(err)}`);
        throw err;
      }
    } finally {
      this.log(`check ${label}: ${controller.signal.aborted ? 'cancelled' : 'done'} (${finished.size} of ${wanted.length} results)`);
      request.signal?.removeEventListener('abort', onOuterAbort);
      controllers.delete(controller);
      if (controllers.size === 0) this.controllers.delete(request.uri);
      this.markRunning(
        request.uri,
        wanted.filter((f) => !finished.has(f)),
        -1,
      );
      this.onChange(request.uri);
      this.heap.afterCheck();
    }
    const order = new Map(wanted.map((f, i) => [f, i] as const));
    return collected.sort((a, b) => (order.get(a.forward ?? '') ?? 1e9) - (order.get(b.forward ?? '') ?? 1e9));
  }

  async dispose(): Promise<void> {
    for (const uri of [...this.controllers.keys()]) this.cancel(uri);
    const checker = this.checker;
    this.checker = undefined;
    if (checker) await checker.dispose();
  }

  private getChecker(): Checker {
    if (!this.checker) {
      // Per-call settings go with each checkFile; these are only the pool's starting point.
      // Coverage runners start on first use; gradientProbe.showUnreached off means none (FileCheckRequest.coverage).
      this.checker = new Checker({ settings: DEFAULT_SETTINGS, coverage: true, ...(this.workers !== undefined ? { workers: this.workers } : {}) });
    }
    return this.checker;
  }

  /** Stores a result under a new number, or under `seq`: a stored run's result, now with its coverage. Returns the number. */
  private store(uri: string, forward: string, entry: Omit<StoredResult, 'seq'>, seq = ++this.storedCount): number {
    let perDoc = this.results.get(uri);
    if (!perDoc) this.results.set(uri, (perDoc = new Map()));
    perDoc.set(forward, { ...entry, seq });
    return seq;
  }

  private markRunning(uri: string, forwards: string[], delta: number): void {
    if (forwards.length === 0) return;
    let perDoc = this.running.get(uri);
    if (!perDoc) this.running.set(uri, (perDoc = new Map()));
    for (const f of forwards) {
      const n = Math.max(0, (perDoc.get(f) ?? 0) + delta);
      if (n === 0) perDoc.delete(f);
      else perDoc.set(f, n);
    }
    if (perDoc.size === 0) this.running.delete(uri);
    this.onChange(uri);
  }
}

function hashText(text: string): string {
  return createHash('sha256').update(text).digest('hex').slice(0, 32);
}
