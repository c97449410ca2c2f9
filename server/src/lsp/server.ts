// The language server's wiring: capabilities, and each LSP or custom message routed to its
// feature module behind an error boundary, so a failing handler answers empty and logs
// instead of taking the server down. `runLanguageServer` is what `gradient-probe lsp --stdio` calls.

import { relative } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import {
  CancellationToken,
  CodeActionKind,
  createConnection,
  DidChangeConfigurationNotification,
  FileChangeType,
  ProposedFeatures,
  ResponseError,
  TextDocuments,
  TextDocumentSyncKind,
  type Connection,
  type InitializeParams,
  type InitializeResult,
} from 'vscode-languageserver/node';
import { TextDocument } from 'vscode-languageserver-textdocument';
import { codeActionsFor } from './codeActions';
import { codeLensesFor } from './codeLens';
import { checkOps, opReport, recheck, regressionTest } from './commands';
import { completionsAt } from './completion';
import { definitionAt } from './definition';
import { DocumentEvents } from './documentEvents';
import { hoverAt } from './hover';
import { referencesAt } from './references';
import { documentSymbolsFor, workspaceSymbolsFor } from './symbols';
import { tagHoverAt, withTagHover } from './tagHover';
import { Methods, ServerCommands, type CheckOpsParams, type OpReportParams, type ProbeInitializationOptions, type TrustChangedParams } from './protocol';
import { Session } from './session';
import { checkWorkspace, listWorkspaceOps } from './workspaceCheck';

/** Starts the server on stdio, IPC or a socket, whichever the command line names. */
export function runLanguageServer(): void {
  const connection = createConnection(ProposedFeatures.all);
  // The server must outlive any bug in a handler; a stray error is logged, never fatal.
  process.on('uncaughtException', (err) => connection.console.error(`unexpected error: ${err.stack ?? err.message}`));
  process.on('unhandledRejection', (err) => connection.console.error(`unexpected rejection: ${err instanceof Error ? (err.stack ?? err.message) : String(err)}`));
  startServer(connection);
}

/** Wires every handler onto a connection and starts listening. */
export function startServer(connection: Connection): void {
  const documents = new TextDocuments(TextDocument);
  let session: Session | undefined;
  let events: DocumentEvents | undefined;
  let folders: string[] = [];
  const log = (line: string): void => connection.console.log(line);

  /** Runs a handler; on failure logs it and answers `fallback`. */
  const guard = <T>(name: string, fallback: T, run: () => Promise<T> | T): Promise<T> =>
    Promise.resolve()
      .then(run)
      .catch((err: unknown) => {
        log(`${name} failed: ${err instanceof Error ? (err.stack ?? err.message) : String(err)}`);
        return fallback;
      });
  /** For custom requests: the client gets the error text to show. */
  const guardRequest = <T>(name: string, run: () => Promise<T>): Promise<T | ResponseError<void>> =>
    run().catch((err: unknown) => {
      log(`${name} failed: ${err instanceof Error ? (err.stack ?? err.message) : String(err)}`);
      return new ResponseError<void>(-32603, `${name} failed: ${err instanceof Error ? err.message : String(err)}`);
    });
  const need = (): Session => {
    if (!session) throw new Error('the server is not initialized');
    return session;
  };

  connection.onInitialize((params: InitializeParams): InitializeResult => {
    const options = (params.initializationOptions ?? {}) as ProbeInitializationOptions;
    folders = workspaceFolderPaths(params);
    session = new Session(connection, (uri) => documents.get(uri), {
      // DEVELOPERS.md, "Language server entry": a client that says nothing is trusted (someone started the server by hand).
      trusted: options.workspaceTrusted !== false,
      codeLensRefresh: params.capabilities.workspace?.codeLens?.refreshSupport === true,
    });
    events = new DocumentEvents(session);
    return {
      capabilities: {
        textDocumentSync: { openClose: true, change: TextDocumentSyncKind.Incremental, save: { includeText: false } },
        codeLensProvider: { resolveProvider: false },
        hoverProvider: true,
        completionProvider: { triggerCharacters: ['@', ' ', '(', ',', '.'], resolveProvider: false },
        codeActionProvider: { codeActionKinds: [CodeActionKind.QuickFix, CodeActionKind.RefactorRewrite], resolveProvider: false },
        definitionProvider: true,
        referencesProvider: true,
        documentSymbolProvider: { label: 'Gradient Probe ops' },
        workspaceSymbolProvider: true,
        executeCommandProvider: { commands: [ServerCommands.recheck] },
        workspace: { workspaceFolders: { supported: true, changeNotifications: true } },
      },
      serverInfo: { name: 'gradient-probe', version: '0.1.0' },
    };
  });

  connection.onInitialized(() => {
    // Each step alone: a client without dynamic registration must still get the rest.
    void guard('configuration registration', undefined, () => connection.client.register(DidChangeConfigurationNotification.type, { section: 'gradientProbe' }));
    void guard('workspace folders', undefined, () => {
      connection.workspace.onDidChangeWorkspaceFolders((e) => {
        const removed = new Set(e.removed.map((f) => fileURLToPath(f.uri)));
        folders = [...folders.filter((f) => !removed.has(f)), ...e.added.map((f) => fileURLToPath(f.uri))];
      });
    });
    // The client's status bar shows counts from the start (zero, or why nothing runs).
    void guard('first status', undefined, () => need().pushNow());
  });

  documents.onDidOpen((e) => void guard('open', undefined, () => events?.opened(e)));
  documents.onDidChangeContent((e) => void guard('change', undefined, () => events?.edited(e)));
  documents.onDidSave((e) => void guard('save', undefined, () => events?.saved(e)));
  documents.onDidClose((e) => void guard('close', undefined, () => events?.closed(e)));

  connection.onCodeLens((params) =>
    guard('code lens', [], async () => {
      const facts = await need().facts(need().keyOf(params.textDocument.uri));
      return facts ? codeLensesFor(facts) : [];
    }),
  );

  connection.onHover((params) =>
    guard('hover', null, async () => {
      const facts = await need().facts(need().keyOf(params.textDocument.uri));
      if (!facts) return null;
      return withTagHover(tagHoverAt(facts.snapshot.fsPath, facts.snapshot.text, params.position), hoverAt(facts, params.position));
    }),
  );

  /** The open buffer (or the file) of a request's document, with its path. */
  const sourceOf = (uri: string): { fsPath: string; text: string } | undefined => {
    const fsPath = need().keyOf(uri);
    const current = need().textOf(fsPath);
    return current ? { fsPath, text: current.text } : undefined;
  };

  connection.onCompletion((params) =>
    guard('completion', [], () => {
      const src = sourceOf(params.textDocument.uri);
      return src ? completionsAt(src.fsPath, src.text, params.position) : [];
    }),
  );

  connection.onCodeAction((params) =>
    guard('code action', [], () => {
      const snapshot = need().snapshot(need().keyOf(params.textDocument.uri));
      if (!snapshot) return [];
      return codeActionsFor({
        uri: params.textDocument.uri,
        fileName: snapshot.fsPath,
        text: snapshot.text,
        ops: snapshot.ops,
        range: params.range,
        diagnostics: params.context.diagnostics,
      });
    }),
  );

  connection.onDefinition((params) =>
    guard('definition', null, () => {
      const src = sourceOf(params.textDocument.uri);
      const found = src ? definitionAt(src.fsPath, src.text, params.position) : null;
      // Answer in the client's spelling of a URI it knows.
      return found ? { ...found, uri: found.uri === pathToFileURL(src!.fsPath).toString() ? params.textDocument.uri : found.uri } : null;
    }),
  );

  connection.onReferences((params) =>
    guard('references', [], () => {
      const snapshot = need().snapshot(need().keyOf(params.textDocument.uri));
      return snapshot ? referencesAt(snapshot, params.position) : [];
    }),
  );

  connection.onDocumentSymbol((params) =>
    guard('document symbols', [], async () => {
      const facts = await need().facts(need().keyOf(params.textDocument.uri));
      return facts ? documentSymbolsFor(facts) : [];
    }),
  );

  connection.onWorkspaceSymbol((params) => guard('workspace symbols', [], async () => workspaceSymbolsFor(await listWorkspaceOps(need(), folders), params.query)));

  connection.onExecuteCommand((params) => guard('command', null, async () => (params.command === ServerCommands.recheck ? recheck(need(), params.arguments) : null)));

  connection.onNotification(
    Methods.trustChanged,
    (params: TrustChangedParams) =>
      void guard('trust change', undefined, () => {
        const s = need();
        const trusted = params?.workspaceTrusted === true;
        const was = s.checks.isTrusted;
        s.checks.setTrusted(trusted);
        for (const file of s.knownFiles()) s.changed(file);
        if (trusted && !was) recheckOpenDocuments(s, false);
      }),
  );

  connection.onDidChangeConfiguration(
    () =>
      void guard('configuration change', undefined, () => {
        need().settings.clear();
        recheckOpenDocuments(need(), false);
      }),
  );

  connection.onDidChangeWatchedFiles(
    (params) =>
      void guard('watched files', undefined, () => {
        const s = need();
        let configChanged = false;
        for (const change of params.changes) {
          if (change.uri.endsWith('/gradient-probe.json')) configChanged = true;
          else if (change.type === FileChangeType.Deleted) s.forget(s.keyOf(change.uri));
          // Changed outside this editor (an open document's save is handled by its save event).
          if (change.type !== FileChangeType.Created && !change.uri.endsWith('/gradient-probe.json')) {
            const key = s.keyOf(change.uri);
            if (!events?.isOpen(key)) void guard('re-check of dependents', undefined, () => events?.fileChanged(key));
          }
        }
        if (configChanged) {
          s.settings.clear();
          recheckOpenDocuments(s, false);
        }
      }),
  );

  connection.onRequest(Methods.checkOps, (params: CheckOpsParams, token: CancellationToken) => guardRequest('check', () => checkOps(need(), params, signalOf(token))));

  connection.onRequest(Methods.listWorkspaceOps, () => guardRequest('list ops', () => listWorkspaceOps(need(), folders)));

  connection.onRequest(Methods.checkWorkspace, (_params: unknown, token: CancellationToken) =>
    guardRequest('workspace check', () =>
      checkWorkspace(
        need(),
        folders,
        signalOf(token),
        (p) => void connection.sendNotification(Methods.workspaceProgress, p),
        (file) => relativeToFolders(file, folders),
      ),
    ),
  );

  connection.onRequest(Methods.opReport, (params: OpReportParams, token: CancellationToken) => guardRequest('report', () => opReport(need(), params, signalOf(token))));
  connection.onRequest(Methods.regressionTest, (params: OpReportParams) => guardRequest('regression test', () => regressionTest(need(), params)));

  connection.onShutdown(async () => {
    events?.dispose();
    await session?.dispose();
  });

  function recheckOpenDocuments(s: Session, force: boolean): void {
    for (const doc of documents.all()) {
      const key = s.keyOf(doc.uri);
      s.changed(key);
      void s
        .effectiveSettings(key)
        .then((settings) => {
          if (settings.checkWhen === 'on-command' || !s.checks.isTrusted) return;
          return s.check(key, { force }).then(() => undefined);
        })
        .catch((err: unknown) => log(`re-check of ${key}: ${err instanceof Error ? err.message : String(err)}`));
    }
  }

  documents.listen(connection);
  connection.listen();
}

function workspaceFolderPaths(params: InitializeParams): string[] {
  const uris = params.workspaceFolders?.map((f) => f.uri) ?? (params.rootUri ? [params.rootUri] : []);
  const out: string[] = [];
  for (const uri of uris) {
    try {
      out.push(fileURLToPath(uri));
    } catch {
      // not a file: folder (a virtual file system); nothing on disk to walk
    }
  }
  return out;
}

function relativeToFolders(file: string, folders: string[]): string {
  for (const folder of folders) {
    const rel = relative(folder, file);
    if (!rel.startsWith('..')) return rel.split('\\').join('/');
  }
  return file;
}

/** LSP cancellation as an AbortSignal, which is what the Checker takes. */
function signalOf(token: CancellationToken): AbortSignal {
  const controller = new AbortController();
  if (token.isCancellationRequested) controller.abort();
  else token.onCancellationRequested(() => controller.abort());
  return controller.signal;
}
