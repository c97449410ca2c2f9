// The extension's one owner of lifetimes: the language client, the output channel, the status
// bar, the Testing view, report panels and every subscription. Restarting the server replaces
// the client and leaks nothing.

import * as path from 'node:path';
import * as vscode from 'vscode';
import { LanguageClient, TransportKind, type LanguageClientOptions, type ServerOptions } from 'vscode-languageclient/node';
import {
  Methods,
  type FileOps,
  type OpStatesParams,
  type ProbeInitializationOptions,
  type StatusParams,
  type TrustChangedParams,
  type WorkspaceProgressParams,
} from '../../server/src/lsp/protocol';
import { registerCommands } from './commands';
import { RecordingOutputChannel } from './outputChannel';
import { ReportPanels } from './reportPanel';
import { ProbeStatusBar } from './statusBar';
import { ProbeTests } from './testing';

/** What `activate` returns: enough for the in-editor tests to wait for the server and read its counts. */
export interface ProbeApi {
  /** Resolves once the language server answered `initialize`. */
  ready(): Promise<void>;
  /** The latest counts the server sent (undefined before the first). */
  status(): StatusParams | undefined;
  /** The latest op states of a file, by URI string. */
  ops(uri: string): FileOps | undefined;
  /** The outcome of a Testing view item's latest run (id: `URI#forward`). */
  testOutcome(id: string): string | undefined;
  /** How many test runs were recorded from checks started outside the Testing view. */
  recordedTestRuns(): number;
  /** The last lines written to the extension's output channel (client and server logs). */
  logTail(): string[];
}

export class ProbeContext implements vscode.Disposable {
  readonly output: RecordingOutputChannel;
  readonly statusBar: ProbeStatusBar;
  readonly tests: ProbeTests;
  readonly reports: ReportPanels;
  private client: LanguageClient | undefined;
  private starting: Promise<void> | undefined;
  private readonly disposables: vscode.Disposable[] = [];
  /** Subscriptions tied to one client; dropped when it stops. */
  private clientDisposables: vscode.Disposable[] = [];
  private lastStatus: StatusParams | undefined;
  private readonly opsByUri = new Map<string, FileOps>();
  private workspaceProgress: ((p: WorkspaceProgressParams) => void) | undefined;

  constructor(readonly extension: vscode.ExtensionContext) {
    this.output = new RecordingOutputChannel(vscode.window.createOutputChannel('Gradient Probe'));
    this.statusBar = new ProbeStatusBar();
    this.tests = new ProbeTests(this);
    this.reports = new ReportPanels(this);
    this.disposables.push(this.output, this.statusBar, this.tests, this.reports);
    this.disposables.push(...registerCommands(this));
    // Trust can only be granted while the window lives (withdrawing it reloads the window).
    this.disposables.push(
      vscode.workspace.onDidGrantWorkspaceTrust(() => {
        const params: TrustChangedParams = { workspaceTrusted: true };
        void this.client?.sendNotification(Methods.trustChanged, params);
      }),
    );
  }

  readonly api: ProbeApi = {
    ready: () => this.starting ?? Promise.resolve(),
    status: () => this.lastStatus,
    ops: (uri) => this.opsByUri.get(uri),
    testOutcome: (id) => this.tests.outcomes.get(id),
    recordedTestRuns: () => this.tests.recordedRuns,
    logTail: () => this.output.tail(),
  };

  /** The running client, or undefined (commands then say the server is not running). */
  get running(): LanguageClient | undefined {
    return this.client?.isRunning() ? this.client : undefined;
  }

  knownOps(uri: string): FileOps | undefined {
    return this.opsByUri.get(uri);
  }

  /** Routes workspace-check progress to whoever is showing it. */
  onWorkspaceProgress(listener: ((p: WorkspaceProgressParams) => void) | undefined): void {
    this.workspaceProgress = listener;
  }

  start(): Promise<void> {
    this.starting = this.startClient().catch((err: unknown) => {
      const message = err instanceof Error ? err.message : String(err);
      this.output.appendLine(`The language server did not start: ${message}`);
      this.statusBar.showStopped(message);
    });
    return this.starting;
  }

  async stop(): Promise<void> {
    const client = this.client;
    this.client = undefined;
    for (const d of this.clientDisposables) d.dispose();
    this.clientDisposables = [];
    if (client) {
      try {
        await client.stop();
      } catch (err) {
        this.output.appendLine(`stopping the server: ${err instanceof Error ? err.message : String(err)}`);
      }
    }
  }

  async restart(): Promise<void> {
    await this.stop();
    await this.start();
  }

  dispose(): void {
    void this.stop();
    for (const d of this.disposables) d.dispose();
  }

  private async startClient(): Promise<void> {
    const serverModule = this.extension.asAbsolutePath(path.join('dist', 'server.js'));
    const serverOptions: ServerOptions = {
      run: { module: serverModule, transport: TransportKind.ipc },
      debug: { module: serverModule, transport: TransportKind.ipc, options: { execArgv: ['--nolazy', '--inspect=6019'] } },
    };
    const initializationOptions: ProbeInitializationOptions = { workspaceTrusted: vscode.workspace.isTrusted };
    const clientOptions: LanguageClientOptions = {
      documentSelector: [
        { scheme: 'file', language: 'typescript' },
        { scheme: 'file', language: 'typescriptreact' },
      ],
      synchronize: {
        fileEvents: vscode.workspace.createFileSystemWatcher('**/{gradient-probe.json,*.ts,*.tsx,*.mts,*.cts}'),
      },
      initializationOptions,
      outputChannel: this.output,
    };
    const client = new LanguageClient('gradientProbe', 'Gradient Probe', serverOptions, clientOptions);
    this.clientDisposables.push(
      client.onNotification(Methods.status, (status: StatusParams) => {
        this.lastStatus = status;
        this.statusBar.update(status);
      }),
      client.onNotification(Methods.opStates, (params: OpStatesParams) => {
        this.opsByUri.set(params.uri, params);
        this.tests.updateFile(params);
      }),
      client.onNotification(Methods.workspaceProgress, (p: WorkspaceProgressParams) => this.workspaceProgress?.(p)),
    );
    this.client = client;
    this.statusBar.showStarting();
    await client.start();
    this.statusBar.update(this.lastStatus ?? { pass: 0, mismatch: 0, inconclusive: 0, error: 0, checking: 0, trusted: vscode.workspace.isTrusted, opsRun: 0, isolated: false });
  }
}
