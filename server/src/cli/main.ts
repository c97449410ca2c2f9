// Entry of the `gradient-probe` command (built to dist/cli.js, started by bin/gradient-probe.js):
// parse the arguments, run the command, exit with the interface's code.

import packageJson from '../../../package.json';
import { parseArgs, UsageError, type CliCommand } from './args';
import { EXIT_FAILED, EXIT_OK, EXIT_USAGE, runCheckCommand } from './check';
import { checkHelp, generalHelp, lspHelp, mergeHelp } from './help';
import { startLanguageServer } from './lsp';
import { runMergeCommand } from './merge';

const VERSION: string = packageJson.version;

async function main(argv: string[]): Promise<number | 'serving'> {
  let command: CliCommand;
  try {
    command = parseArgs(argv);
  } catch (err) {
    if (!(err instanceof UsageError)) throw err;
    process.stderr.write(`gradient-probe: ${err.message}\nRun "gradient-probe --help" for usage.\n`);
    return EXIT_USAGE;
  }
  switch (command.kind) {
    case 'help':
      process.stdout.write(command.command === 'check' ? checkHelp() : command.command === 'lsp' ? lspHelp() : command.command === 'merge' ? mergeHelp() : generalHelp());
      return EXIT_OK;
    case 'version':
      process.stdout.write(`${VERSION}\n`);
      return EXIT_OK;
    case 'lsp': {
      const failure = startLanguageServer();
      if (failure === undefined) return 'serving';
      process.stderr.write(`gradient-probe: ${failure}\n`);
      return EXIT_FAILED;
    }
    case 'merge':
      return runMergeCommand(command.options, { cwd: process.cwd(), env: process.env, stdout: process.stdout, stderr: process.stderr }, VERSION);
    case 'check': {
      const interrupt = new AbortController();
      let interrupts = 0;
      // First Ctrl-C: stop checking and dispose the runners; a second one leaves at once.
      const onSignal = (): void => {
        interrupts++;
        if (interrupts > 1) process.exit(130);
        interrupt.abort();
      };
      process.on('SIGINT', onSignal);
      process.on('SIGTERM', onSignal);
      const code = await runCheckCommand(
        command.options,
        {
          cwd: process.cwd(),
          env: process.env,
          stdout: process.stdout,
          stderr: process.stderr,
          signal: interrupt.signal,
        },
        VERSION,
      );
      return interrupt.signal.aborted ? 130 : code;
    }
  }
}

/** Exits once stdout and stderr have taken everything, so no leftover handle keeps the process alive. */
function exitAfterFlush(code: number): void {
  process.exitCode = code;
  process.stdout.write('', () => process.stderr.write('', () => process.exit(code)));
}

main(process.argv.slice(2)).then(
  (code) => {
    if (code !== 'serving') exitAfterFlush(code);
  },
  (err: unknown) => {
    process.stderr.write(`gradient-probe: internal error: ${err instanceof Error ? (err.stack ?? err.message) : String(err)}\n`);
    exitAfterFlush(EXIT_FAILED);
  },
);
