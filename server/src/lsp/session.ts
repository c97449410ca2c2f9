// The server's state for one connection: open documents and files it has checked, their
// discovery snapshots, settings and results, and pushing what changed to the client
// (diagnostics, op states, status counts, a code-lens refresh). Features read it; server.ts wires it.

import { readFileSync } from 'node:fs';
import { dirname } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { CodeLensRefreshRequest, MessageType, ShowMessageNotification, type Connection } from 'vscode-languageserver';
import type { TextDocument } from 'vscode-languageserver-textdocument';
import type { OpResult } from '../model/types';
import { CheckRefused, CheckService } from './checkService';
import { CrashNotice } from './crashNotice';
import { diagnosticsFor } from './diagnostics';
import { snapshotOf, type DocumentFacts, type DocumentSnapshot } from './documentFacts';
import { Methods, type FileOps } from './protocol';
import { SettingsCache, type EffectiveSettings } from './settings';
import { opSummaries, statusOf } from './testsView';
import { folderStanding } from './opStanding';

/** Coalesces bursts of results into one push; short enough to feel immediate. */
const PUSH_DELAY_MS = 30;

export interface SessionOptions {
  trusted: boolean;
  workers?: number;
  /** Whether the client handles workspace/codeLens/refresh. */
  codeLensRefresh: boolean;
}

/** What a check of one file may be asked for besides its text and settings. */
export interface CheckOptions {
  /** Display names of the ops to check; default every op of the file. */
  forwards?: string[];
  /** Run even when a result for the same text and settings exists. */
  force?: boolean;
  signal?: AbortSignal;
  /** Step pictures to draw instead of the settings' (the report page asks for 'all'). */
  stepScans?: 'all';
  /** A re-check that only adds step pictures to the latest results (FileCheckRequest.picturesOnly). */
  picturesOnly?: boolean;
}

export class Session {
  readonly checks: CheckService;
  readonly settings: SettingsCache;
  private readonly snapshots = new Map<string, { version: number | null; snapshot: DocumentSnapshot }>();
  /** The client's spelling of each file's URI (fsPath → uri), so we answer in its terms. */
  private readonly uris = new Map<string, string>();
  private readonly dirty = new Set<string>();
  /** What was last pushed per file, for the status counts. */
  private readonly summaries = new Map<string, { ops: FileOps; isolated: boolean }>();
  private pushTimer: NodeJS.Timeout | undefined;
  private disposed = false;
  /** One message per op whose runner died, not one per re-check of the same broken op. */
  private readonly crashes = new CrashNotice((message) => {
    this.log(message);
    if (!this.disposed) void this.connection.sendNotification(ShowMessageNotification.type, { type: MessageType.Warning, message });
  });

  constructor(
    private readonly connection: Connection,
    private readonly openDocument: (uri: string) => TextDocument | undefined,
    private readonly options: SessionOptions,
  ) {
    this.checks = new CheckService(
      { trusted: options.trusted, ...(options.workers !== undefined ? { workers: options.workers } : {}) },
      (key) => this.changed(key),
      (line) => this.log(line),
    );
    this.settings = new SettingsCache((uri) => connection.workspace.getConfiguration({ scopeUri: uri, section: 'gradientProbe' }));
  }

  log(line: string): void {
    if (!this.disposed) this.connection.console.log(line);
  }

  /** The key every per-file map uses: the file path, whatever the client's URI spelling. */
  keyOf(uri: string): string {
    let fsPath: string;
    try {
      fsPath = fileURLToPath(uri);
    } catch {
      fsPath = uri; // not a file: URI (untitled:…); it is its own key and is never checked
    }
    if (!this.uris.has(fsPath)) this.uris.set(fsPath, uri);
    return fsPath;
  }

  uriOf(fsPath: string): string {
    return this.uris.get(fsPath) ?? pathToFileURL(fsPath).toString();
  }

  /** The current text of a file: the open buffer, else the disk. */
  textOf(fsPath: string): { text: string; version: number | null } | undefined {
    const doc = this.openDocument(this.uriOf(fsPath));
    if (doc) return { text: doc.getText(), version: doc.version };
    try {
      return { text: readFileSync(fsPath, 'utf8'), version: null };
    } catch {
      return undefined;
    }
  }

  snapshot(fsPath: string): DocumentSnapshot | undefined {
    const current = this.textOf(fsPath);
    if (!current) return undefined;
    const cached = this.snapshots.get(fsPath);
    if (cached && current.version !== null && cached.version === current.version) return cached.snapshot;
    if (cached && current.version === null && cached.snapshot.text === current.text) return cached.snapshot;
    const snapshot = snapshotOf(this.uriOf(fsPath), fsPath, current.text, (l) => this.log(l));
    this.snapshots.set(fsPath, { version: current.version, snapshot });
    return snapshot;
  }

  /** Settings of a document (`isFolder` false) or of a workspace folder. */
  async effectiveSettings(fsPath: string, isFolder = false): Promise<EffectiveSettings> {
    const settings = await this.settings.get(this.uriOf(fsPath), isFolder ? fsPath : dirname(fsPath));
    for (const problem of settings.problems) this.warnOnce(problem);
    return settings;
  }

  async facts(fsPath: string): Promise<DocumentFacts | undefined> {
    const snapshot = this.snapshot(fsPath);
    if (!snapshot) return undefined;
    const settings = await this.effectiveSettings(fsPath);
    return {
      snapshot,
      trusted: this.checks.isTrusted,
      isolated: !this.checks.isTrusted && settings.isolatedWhenUntrusted,
      showUnreached: settings.showUnreached,
      ...(settings.configError ? { configError: settings.configError } : {}),
      latest: (forward) => this.checks.latest(fsPath, forward),
      resultSeq: (forward) => this.checks.latestSeq(fsPath, forward),
      isRunning: (forward) => this.checks.isRunning(fsPath, forward),
    };
  }

  /**
   * Checks a file (all its ops or those named) with its current text and settings.
   * Throws CheckRefused when nothing may run, saying why.
   */
  async check(fsPath: string, opts: CheckOptions = {}): Promise<OpResult[]> {
    const settings = await this.effectiveSettings(fsPath);
    const isolated = !this.checks.isTrusted && settings.isolatedWhenUntrusted;
    const standing = folderStanding({ trusted: this.checks.isTrusted, isolated, ...(settings.configError ? { configError: settings.configError } : {}) });
    if (!standing.may) throw new CheckRefused(standing.reason, standing.code);
    const snapshot = this.snapshot(fsPath);
    if (!snapshot) throw new CheckRefused(`${fsPath} cannot be read`, 'unreadable');
    const runnable = snapshot.ops.filter((op) => op.problems.length === 0).map((op) => op.forward);
    this.changed(fsPath);
    const results = await this.checks.check({
      uri: fsPath,
      fsPath,
      text: snapshot.text,
      // Untrusted with the user's opt-in: the isolated interpreter, never the runner processes.
      settings: { ...settings.settings, ...(isolated ? { isolation: 'interpreter' } : {}), ...(opts.stepScans ? { stepScans: opts.stepScans } : {}) },
      knownForwards: runnable,
      coverage: settings.showUnreached,
      ...(opts.forwards ? { forwards: opts.forwards.filter((f) => runnable.includes(f)) } : {}),
      ...(opts.force !== undefined ? { force: opts.force } : {}),
      ...(opts.signal ? { signal: opts.signal } : {}),
      ...(opts.picturesOnly ? { picturesOnly: true } : {}),
    });
    this.crashes.observe(fsPath, results);
    return results;
  }

  /** Schedules a push of everything the client shows about a file. */
  changed(fsPath: string): void {
    if (this.disposed) return;
    this.dirty.add(fsPath);
    if (!this.pushTimer) this.pushTimer = setTimeout(() => void this.push(), PUSH_DELAY_MS);
  }

  /** Every file the session knows: open documents and checked files. */
  knownFiles(): string[] {
    return [...new Set([...this.snapshots.keys(), ...this.checks.knownUris()])];
  }

  async pushNow(): Promise<void> {
    await this.push();
  }

  forget(fsPath: string): void {
    this.checks.forget(fsPath);
    this.snapshots.delete(fsPath);
    this.summaries.delete(fsPath);
    void this.connection.sendDiagnostics({ uri: this.uriOf(fsPath), diagnostics: [] });
  }

  async dispose(): Promise<void> {
    this.disposed = true;
    if (this.pushTimer) clearTimeout(this.pushTimer);
    await this.checks.dispose();
  }

  private readonly warned = new Set<string>();
  private warnOnce(message: string): void {
    if (this.warned.has(message)) return;
    this.warned.add(message);
    void this.connection.window.showWarningMessage(`Gradient Probe: ${message}`);
  }

  private async push(): Promise<void> {
    this.pushTimer = undefined;
    const files = [...this.dirty];
    this.dirty.clear();
    for (const fsPath of files) {
      try {
        const facts = await this.facts(fsPath);
        if (!facts || this.disposed) {
          this.summaries.delete(fsPath);
          continue;
        }
        const summary = opSummaries(facts);
        this.summaries.set(fsPath, { ops: summary, isolated: facts.isolated });
        await this.connection.sendDiagnostics({ uri: facts.snapshot.uri, diagnostics: diagnosticsFor(facts) });
        await this.connection.sendNotification(Methods.opStates, summary);
      } catch (err) {
        this.log(`could not update ${fsPath}: ${err instanceof Error ? err.message : String(err)}`);
      }
    }
    if (this.disposed) return;
    try {
      // Counts from each file's last pushed summary: a push costs the changed files only.
      const all: FileOps[] = [...this.summaries.values()].map((s) => s.ops);
      const isolated = [...this.summaries.values()].some((s) => s.isolated);
      await this.connection.sendNotification(Methods.status, statusOf(all, this.checks.isTrusted, this.checks.opsRun, isolated));
      if (this.options.codeLensRefresh) await this.connection.sendRequest(CodeLensRefreshRequest.type);
    } catch (err) {
      this.log(`could not refresh: ${err instanceof Error ? err.message : String(err)}`);
    }
  }
}
