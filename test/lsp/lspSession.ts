// Test helper: starts the real language server (`node dist/server.js --stdio`) as a child
// process and speaks LSP to it with vscode-languageserver-protocol, recording what it pushes
// (diagnostics, op states, status) and answering its requests like an editor would.

import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import type * as ProtocolNode from 'vscode-languageserver-protocol/lib/node/main';
import type {
  ConfigurationParams,
  Diagnostic,
  LogMessageParams,
  ProtocolConnection,
  PublishDiagnosticsParams,
  ShowMessageParams,
} from 'vscode-languageserver-protocol/lib/node/main';
import type * as JsonRpcNode from 'vscode-jsonrpc/lib/node/main';
import { Methods, type FileOps, type StatusParams } from '../../server/src/lsp/protocol';

/** The repository root, found from the built test file (dist/test/lsp) or the source (test/lsp). */
export function repoRoot(): string {
  let dir = __dirname;
  while (!existsSync(join(dir, 'package.json')) || !existsSync(join(dir, 'server'))) {
    const parent = resolve(dir, '..');
    if (parent === dir) throw new Error('repository root not found');
    dir = parent;
  }
  return dir;
}

/**
 * The client library's Node entry. The project resolves modules the node10 way, which ignores
 * package `exports`: the types come from the file, the value from the exported "./node" path.
 */
// eslint-disable-next-line @typescript-eslint/no-require-imports
export const lsp = require('vscode-languageserver-protocol/node') as typeof ProtocolNode;
const {
  CodeLensRefreshRequest,
  ConfigurationRequest,
  createProtocolConnection,
  DidChangeTextDocumentNotification,
  DidOpenTextDocumentNotification,
  DidSaveTextDocumentNotification,
  ExitNotification,
  InitializedNotification,
  InitializeRequest,
  LogMessageNotification,
  PublishDiagnosticsNotification,
  RegistrationRequest,
  ShowMessageNotification,
  ShutdownRequest,
} = lsp;
// eslint-disable-next-line @typescript-eslint/no-require-imports
const { StreamMessageReader, StreamMessageWriter } = require('vscode-jsonrpc/node') as typeof JsonRpcNode;

export const FIXTURES = join(repoRoot(), 'test', 'fixtures', 'lsp');

export interface SessionOptions {
  /** `initializationOptions.workspaceTrusted`; undefined sends no initialization options. */
  trusted?: boolean;
  /** What the server gets for `workspace/configuration` of section gradientProbe. */
  settings?: Record<string, unknown>;
  workspace?: string;
  /** The folder `open`, `uri` and `text` take relative paths from (default: the LSP fixtures). */
  filesRoot?: string;
}

export class LspSession {
  readonly child: ChildProcess;
  readonly connection: ProtocolConnection;
  readonly diagnostics = new Map<string, Diagnostic[]>();
  readonly opStates = new Map<string, FileOps>();
  /** Every op state pushed, in order: `uri#forward state`. */
  readonly stateHistory: string[] = [];
  readonly logs: string[] = [];
  readonly messages: string[] = [];
  lastStatus: StatusParams | undefined;
  private readonly waiters: Array<() => void> = [];
  private readonly versions = new Map<string, number>();

  constructor(private readonly options: SessionOptions = {}) {
    const server = join(repoRoot(), 'dist', 'server.js');
    if (!existsSync(server)) throw new Error(`${server} is missing: run npm run build first`);
    this.child = spawn(process.execPath, [server, '--stdio'], { stdio: ['pipe', 'pipe', 'pipe'] });
    this.child.stderr!.on('data', (d: Buffer) => this.logs.push(d.toString()));
    this.connection = createProtocolConnection(new StreamMessageReader(this.child.stdout!), new StreamMessageWriter(this.child.stdin!));
    this.connection.onNotification(PublishDiagnosticsNotification.type, (p: PublishDiagnosticsParams) => {
      this.diagnostics.set(p.uri, p.diagnostics);
      this.poke();
    });
    this.connection.onNotification(Methods.opStates, (p: FileOps) => {
      this.opStates.set(p.uri, p);
      for (const op of p.ops) this.stateHistory.push(`${p.uri}#${op.forward} ${op.state}`);
      this.poke();
    });
    this.connection.onNotification(Methods.status, (p: StatusParams) => {
      this.lastStatus = p;
      this.poke();
    });
    this.connection.onNotification(LogMessageNotification.type, (p: LogMessageParams) => this.logs.push(p.message));
    this.connection.onNotification(ShowMessageNotification.type, (p: ShowMessageParams) => this.messages.push(p.message));
    this.connection.onRequest(ConfigurationRequest.type, (p: ConfigurationParams) => p.items.map(() => this.options.settings ?? {}));
    this.connection.onRequest(CodeLensRefreshRequest.type, () => null);
    this.connection.onRequest(RegistrationRequest.type, () => null);
    this.connection.listen();
  }

  async initialize(): Promise<void> {
    const workspace = this.options.workspace ?? FIXTURES;
    await this.connection.sendRequest(InitializeRequest.type, {
      processId: process.pid,
      rootUri: pathToFileURL(workspace).toString(),
      workspaceFolders: [{ uri: pathToFileURL(workspace).toString(), name: 'fixtures' }],
      capabilities: {
        workspace: { configuration: true, codeLens: { refreshSupport: true }, didChangeConfiguration: { dynamicRegistration: true } },
        textDocument: { publishDiagnostics: { relatedInformation: true } },
      },
      ...(this.options.trusted !== undefined ? { initializationOptions: { workspaceTrusted: this.options.trusted } } : {}),
    });
    await this.connection.sendNotification(InitializedNotification.type, {});
  }

  uri(relativePath: string): string {
    return pathToFileURL(join(this.options.filesRoot ?? FIXTURES, relativePath)).toString();
  }

  text(relativePath: string): string {
    return readFileSync(join(this.options.filesRoot ?? FIXTURES, relativePath), 'utf8');
  }

  async open(relativePath: string): Promise<string> {
    const uri = this.uri(relativePath);
    this.versions.set(uri, 1);
    await this.connection.sendNotification(DidOpenTextDocumentNotification.type, {
      textDocument: { uri, languageId: 'typescript', version: 1, text: this.text(relativePath) },
    });
    return uri;
  }

  /** Inserts text at a position (an incremental change, as editors send them). */
  async insert(uri: string, at: { line: number; character: number }, text: string): Promise<void> {
    const version = (this.versions.get(uri) ?? 1) + 1;
    this.versions.set(uri, version);
    await this.connection.sendNotification(DidChangeTextDocumentNotification.type, {
      textDocument: { uri, version },
      contentChanges: [{ range: { start: at, end: at }, text }],
    });
  }

  /** Replaces the whole text of an open document (a full-content change). */
  async replaceText(uri: string, text: string): Promise<void> {
    const version = (this.versions.get(uri) ?? 1) + 1;
    this.versions.set(uri, version);
    await this.connection.sendNotification(DidChangeTextDocumentNotification.type, { textDocument: { uri, version }, contentChanges: [{ text }] });
  }

  async save(uri: string): Promise<void> {
    await this.connection.sendNotification(DidSaveTextDocumentNotification.type, { textDocument: { uri } });
  }

  /** States pushed for one op since history index `from`. */
  statesSince(from: number, uri: string, forward: string): string[] {
    const prefix = `${uri}#${forward} `;
    return this.stateHistory
      .slice(from)
      .filter((h) => h.startsWith(prefix))
      .map((h) => h.slice(prefix.length));
  }

  /** Resolves when `test` holds after some pushed notification (or already holds). */
  waitFor<T>(what: string, test: () => T | undefined | false, timeoutMs = 30_000): Promise<T> {
    return new Promise((resolvePromise, reject) => {
      const check = (): boolean => {
        const value = test();
        if (value) {
          clearTimeout(timer);
          resolvePromise(value);
          return true;
        }
        return false;
      };
      const timer = setTimeout(() => {
        const i = this.waiters.indexOf(waiter);
        if (i >= 0) this.waiters.splice(i, 1);
        reject(new Error(`timed out waiting for ${what}; last op states: ${JSON.stringify([...this.opStates.values()])}; logs: ${this.logs.join('').slice(-2000)}`));
      }, timeoutMs);
      const waiter = (): void => {
        if (check()) this.waiters.splice(this.waiters.indexOf(waiter), 1);
      };
      if (!check()) this.waiters.push(waiter);
    });
  }

  opState(uri: string, forward: string): string | undefined {
    return this.opStates.get(uri)?.ops.find((o) => o.forward === forward)?.state;
  }

  /** Process ids whose parent is the server: the sandbox's runner processes. */
  serverChildren(): number[] {
    const pid = this.child.pid;
    const out: number[] = [];
    for (const entry of readdirSync('/proc')) {
      if (!/^\d+$/.test(entry)) continue;
      try {
        // /proc/PID/stat: "pid (comm) state ppid ..."; comm may hold spaces, so split after ')'.
        const stat = readFileSync(`/proc/${entry}/stat`, 'utf8');
        const ppid = Number(stat.slice(stat.lastIndexOf(')') + 2).split(' ')[1]);
        if (ppid === pid) out.push(Number(entry));
      } catch {
        // the process ended while we looked
      }
    }
    return out;
  }

  /** The server's children that are sandbox runners (not esbuild's service, which only bundles). */
  runnerChildren(): number[] {
    return this.serverChildren().filter((pid) => {
      try {
        return readFileSync(`/proc/${pid}/cmdline`, 'utf8').includes('sandbox-child');
      } catch {
        return false;
      }
    });
  }

  async close(): Promise<void> {
    try {
      await Promise.race([this.connection.sendRequest(ShutdownRequest.type), new Promise((r) => setTimeout(r, 5000))]);
      await this.connection.sendNotification(ExitNotification.type);
    } catch {
      // already gone
    }
    await new Promise<void>((r) => {
      if (this.child.exitCode !== null) return r();
      const t = setTimeout(() => {
        this.child.kill('SIGKILL');
        r();
      }, 5000);
      this.child.once('exit', () => {
        clearTimeout(t);
        r();
      });
    });
    this.connection.dispose();
  }

  private poke(): void {
    for (const w of [...this.waiters]) w();
  }
}

/** A trusted server on a temporary workspace folder; `close` stops the server and removes the folder. */
export interface TempWorkspace {
  dir: string;
  s: LspSession;
  close(): Promise<void>;
}

/** Makes a temporary folder (name starting with `prefix`), lets `fill` write it, and starts a trusted server on it. */
export async function tempWorkspace(prefix: string, fill: (dir: string) => void, settings: Record<string, unknown>): Promise<TempWorkspace> {
  const dir = mkdtempSync(join(tmpdir(), prefix));
  fill(dir);
  const s = new LspSession({ trusted: true, workspace: dir, filesRoot: dir, settings });
  await s.initialize();
  return {
    dir,
    s,
    close: async () => {
      await s.close();
      rmSync(dir, { recursive: true, force: true });
    },
  };
}
