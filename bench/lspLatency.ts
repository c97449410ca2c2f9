// Editor latency over the real LSP connection: spawns `node dist/bench/cli.js lsp --stdio` (the
// CLI that bin/gradient-probe.js runs, built privately by bench/run.mjs), speaks LSP to it with vscode-languageserver-protocol, and times didOpen (fresh server) and
// edit + didSave to the publishDiagnostics that carries the finished check, for each demo file.
import { spawn } from 'node:child_process';
import { cpSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { median } from './floor';
import { jsonrpc, lsp, type ProtocolConnection, type PublishDiagnosticsParams } from './lspClient';
import type { LatencyMeasurement } from './results';

const {
  createProtocolConnection,
  DidChangeTextDocumentNotification,
  DidOpenTextDocumentNotification,
  DidSaveTextDocumentNotification,
  ExitNotification,
  InitializedNotification,
  InitializeRequest,
  PublishDiagnosticsNotification,
  ShutdownRequest,
} = lsp;
const { StreamMessageReader, StreamMessageWriter } = jsonrpc;

/** How long to wait for a finished check before calling the measurement failed, in ms. */
const WAIT_LIMIT_MS = 30_000;

interface OpState {
  state: string;
}

/** A running language server and the client side of its connection. */
export class ServerUnderTest {
  readonly connection: ProtocolConnection;
  readonly pid: number;
  private readonly proc: ReturnType<typeof spawn>;
  /** Time of the latest publishDiagnostics per URI. */
  private readonly lastDiagnostics = new Map<string, number>();
  private waiters: Array<{ uri: string; resolve: (at: number) => void }> = [];

  /** `nodeArgs`: extra Node options for the server process (e.g. a heap-snapshot signal when diagnosing). */
  constructor(root: string, cliPath: string, nodeArgs: string[] = []) {
    this.proc = spawn(process.execPath, [...nodeArgs, cliPath, 'lsp', '--stdio'], { cwd: root, stdio: ['pipe', 'pipe', 'ignore'] });
    this.pid = this.proc.pid ?? -1;
    this.connection = createProtocolConnection(new StreamMessageReader(this.proc.stdout!), new StreamMessageWriter(this.proc.stdin!));
    const c = this.connection;
    c.onRequest('workspace/configuration', (params: { items: unknown[] }) => params.items.map(() => ({})));
    c.onRequest('client/registerCapability', () => null);
    c.onRequest('workspace/codeLens/refresh', () => null);
    c.onRequest('window/workDoneProgress/create', () => null);
    c.onNotification(PublishDiagnosticsNotification.type, (p: PublishDiagnosticsParams) => this.lastDiagnostics.set(p.uri, performance.now()));
    c.onNotification('gradientProbe/opStates', (p: { uri: string; ops: OpState[] }) => {
      // Diagnostics go out just before the op states of the same push: a push whose ops are all
      // settled carries the finished check, and its diagnostics time is the one that counts.
      if (p.ops.length === 0 || p.ops.some((o) => o.state === 'checking' || o.state === 'unchecked')) return;
      const at = this.lastDiagnostics.get(p.uri) ?? performance.now();
      const ready = this.waiters.filter((w) => w.uri === p.uri);
      this.waiters = this.waiters.filter((w) => w.uri !== p.uri);
      for (const w of ready) w.resolve(at);
    });
    c.listen();
  }

  async initialize(root: string): Promise<void> {
    await this.connection.sendRequest(InitializeRequest.type, {
      processId: process.pid,
      rootUri: pathToFileURL(root).toString(),
      workspaceFolders: [{ uri: pathToFileURL(root).toString(), name: 'bench' }],
      capabilities: { workspace: { configuration: true, codeLens: { refreshSupport: true } }, textDocument: { synchronization: { didSave: true } } },
      initializationOptions: { workspaceTrusted: true },
    });
    await this.connection.sendNotification(InitializedNotification.type, {});
  }

  /** Resolves with the time of the diagnostics of the next finished check of uri. */
  nextFinished(uri: string): Promise<number> {
    return new Promise((resolve, reject) => {
      const timer = setTimeout(() => reject(new Error(`no finished check of ${uri} within ${WAIT_LIMIT_MS} ms`)), WAIT_LIMIT_MS);
      this.waiters.push({
        uri,
        resolve: (at) => {
          clearTimeout(timer);
          resolve(at);
        },
      });
    });
  }

  async stop(): Promise<void> {
    const exited = new Promise((resolve) => this.proc.once('exit', resolve));
    try {
      await this.connection.sendRequest(ShutdownRequest.type);
      await this.connection.sendNotification(ExitNotification.type);
    } catch {
      this.proc.kill('SIGKILL');
    }
    await Promise.race([exited, new Promise((r) => setTimeout(r, 3000))]);
    if (this.proc.exitCode === null) this.proc.kill('SIGKILL');
    this.connection.dispose();
  }
}

const sleep = (ms: number): Promise<void> => new Promise((r) => setTimeout(r, ms));

/** Cold open, first save and `saves` warm saves of one demo file on a fresh server. */
async function measureFile(root: string, cliPath: string, file: string, saves: number): Promise<LatencyMeasurement> {
  const path = join(root, 'src', file);
  const uri = pathToFileURL(path).toString();
  const original = readFileSync(path, 'utf8');
  const ops = (original.match(/@backward\b/g) ?? []).length;
  const started = performance.now();
  const server = new ServerUnderTest(root, cliPath);
  try {
    await server.initialize(root);
    const opened = performance.now();
    const coldDone = server.nextFinished(uri);
    await server.connection.sendNotification(DidOpenTextDocumentNotification.type, { textDocument: { uri, languageId: 'typescript', version: 1, text: original } });
    const coldOpenMs = (await coldDone) - opened;
    const times: number[] = [];
    for (let s = 0; s <= saves; s++) {
      // An edit (a comment line) as the editor sends it, written to disk as a save does.
      const text = `${original}\n// edit ${s}\n`;
      await server.connection.sendNotification(DidChangeTextDocumentNotification.type, { textDocument: { uri, version: s + 2 }, contentChanges: [{ text }] });
      writeFileSync(path, text);
      await sleep(100); // let the edit's own push go out first
      const t = performance.now();
      const done = server.nextFinished(uri);
      await server.connection.sendNotification(DidSaveTextDocumentNotification.type, { textDocument: { uri } });
      times.push((await done) - t);
    }
    const warm = times.slice(1);
    const sorted = [...warm].sort((a, b) => a - b);
    return {
      file: `examples/src/${file}`,
      ops,
      coldStartMs: opened - started,
      coldOpenMs,
      firstSaveMs: times[0],
      warmSavesMs: warm,
      warmMedianMs: median(warm),
      warmP90Ms: sorted[Math.min(sorted.length - 1, Math.ceil(0.9 * sorted.length) - 1)] ?? NaN,
    };
  } finally {
    writeFileSync(path, original);
    await server.stop();
  }
}

/** Every demo file with ops, each on a fresh server. */
export async function measureLatency(repo: string, saves: number): Promise<LatencyMeasurement[]> {
  const root = mkdtempSync(join(tmpdir(), 'gradient-probe-lsp-'));
  cpSync(join(repo, 'examples'), root, { recursive: true });
  const cliPath = join(__dirname, 'cli.js');
  const out: LatencyMeasurement[] = [];
  try {
    for (const file of readdirSync(join(root, 'src')).sort()) {
      if (!file.endsWith('.ts') || !readFileSync(join(root, 'src', file), 'utf8').includes('@backward')) continue;
      out.push(await measureFile(root, cliPath, file, saves));
    }
  } finally {
    rmSync(root, { recursive: true, force: true });
  }
  return out;
}
