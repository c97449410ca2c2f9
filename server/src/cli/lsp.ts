// `gradient-probe lsp --stdio`: hands the process to the language server. Loaded lazily, so
// the `check` command works even when the server module is missing or broken.

/** What the language server module offers (server/src/lsp/server.ts). */
interface LanguageServerModule {
  runLanguageServer?: () => void;
}

/**
 * Starts the language server; it picks its transport from process.argv (`--stdio`, …), so
 * nothing else is passed. Returns an error text when the server cannot be started.
 */
export function startLanguageServer(): string | undefined {
  let mod: LanguageServerModule;
  try {
    // A literal require inside try: esbuild bundles the server when it exists and leaves a
    // runtime require (which fails here) when it does not.
    // eslint-disable-next-line @typescript-eslint/no-require-imports
    mod = require('../lsp/server') as LanguageServerModule;
  } catch (err) {
    return `cannot load the language server: ${err instanceof Error ? err.message.split('\n')[0] : String(err)}`;
  }
  if (typeof mod.runLanguageServer !== 'function') return 'the language server module has no runLanguageServer()';
  mod.runLanguageServer();
  return undefined;
}
