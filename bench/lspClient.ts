// The LSP client library's Node entry for the benchmark. The project resolves modules the node10
// way, which ignores package `exports`: the types come from the file, the value from the
// exported "./node" path.
import type * as ProtocolNode from 'vscode-languageserver-protocol/lib/node/main';
import type * as JsonRpcNode from 'vscode-jsonrpc/lib/node/main';

// eslint-disable-next-line @typescript-eslint/no-require-imports
export const lsp = require('vscode-languageserver-protocol/node') as typeof ProtocolNode;
// eslint-disable-next-line @typescript-eslint/no-require-imports
export const jsonrpc = require('vscode-jsonrpc/node') as typeof JsonRpcNode;
export type { ProtocolConnection, PublishDiagnosticsParams } from 'vscode-languageserver-protocol/lib/node/main';
