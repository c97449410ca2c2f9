// Entry of dist/server.js: the language server on the transport named on the command line
// (`--stdio`, `--node-ipc` or `--socket=N`), as the VS Code extension and other editors start it.

import { prepareBundledEsbuild } from './packagedRuntime';

// Before the server module loads esbuild, which reads ESBUILD_BINARY_PATH once at load.
const note = prepareBundledEsbuild(__dirname);
// eslint-disable-next-line @typescript-eslint/no-require-imports
const { runLanguageServer } = require('./server') as typeof import('./server');
runLanguageServer();
// stderr, never stdout: with --stdio, stdout carries the protocol.
if (note) process.stderr.write(`gradient-probe: ${note}\n`);
