// The text of `gradient-probe --help`, `check --help` and `lsp --help`, built from the flag
// table so the help and the parser cannot drift apart.

import { CHECK_FLAGS, MERGE_FLAGS } from './args';

const PURPOSE = 'gradient-probe: compares hand-written gradients (backward functions) with finite differences';

const COMMANDS = [
  ['check [PATH ...] [FLAGS]', 'check the annotated ops in PATHs (files or folders; default: this folder)'],
  ['merge REPORT.json ... [FLAGS]', 'join the --json reports of check --shard runs into one report and exit code'],
  ['lsp --stdio', 'run the language server on standard input/output'],
  ['--help, help [COMMAND]', 'show this text, or the flags of one command'],
  ['--version', 'print the version'],
] as const;

/** Help for the whole program. */
export function generalHelp(): string {
  return [PURPOSE, '', 'Commands:', ...table(COMMANDS.map(([a, b]) => [`gradient-probe ${a}`, b])), '', 'Run "gradient-probe check --help" for the flags of check.', ''].join('\n');
}

/** Help for `check`. */
export function checkHelp(): string {
  const flags = CHECK_FLAGS.map((f) => [f.value ? `${f.name} ${f.value}` : f.name, f.description] as const);
  return [
    'gradient-probe check [PATH ...] [FLAGS]',
    '',
    'Finds every function tagged @backward in the TypeScript sources under PATH, runs it with',
    'seeded random inputs in a separate process, and compares its backward with refined finite',
    'differences. Folders skip node_modules, .git, dist and what .gitignore lists; a file named',
    'on the command line is always checked.',
    '',
    'Flags:',
    ...table(flags),
    '',
    'Settings come from the built-in defaults, then gradient-probe.json (searched for in the',
    "first PATH's folder and upwards, up to the nearest package or repository root; JSON with",
    'comments), then these flags. The report names the configuration file it used.',
    '',
    'Exit status:',
    ...table([
      ['0', 'no op is mismatch or error (a genuine inconclusive is counted, not failed)'],
      ['1', 'an op is mismatch or error, or the time limit stopped its check before every element was'],
      ['', 'compared (unless --allow-unfinished), or it is inconclusive with --fail-on-inconclusive'],
      ['2', 'the command line or the configuration is wrong (the message names the flag or key), or'],
      ['', 'nothing was checked (no sources, no annotated op, all excluded, --filter matched none)'],
    ]),
    '',
    'The checked code runs on this machine, as under a test runner: check only code you trust.',
    'Limits on time and memory catch mistakes such as endless loops; they are no security wall.',
    '',
  ].join('\n');
}

/** Help for `merge`. */
export function mergeHelp(): string {
  const flags = MERGE_FLAGS.map((f) => [f.value ? `${f.name} ${f.value}` : f.name, f.description] as const);
  return [
    'gradient-probe merge REPORT.json ... [FLAGS]',
    '',
    'Joins the --json reports of the jobs of one sharded run (check --shard K/N, one job per K)',
    'into one report, written like check writes it, with one exit code. Refuses reports of',
    'different versions, seeds, settings, configuration files or filters, a shard given twice',
    'or missing, and reports that overlap.',
    '',
    'Flags:',
    ...table(flags),
    '',
    'Exit status as for check; 2 also when the reports cannot be joined (the message says why).',
    '',
  ].join('\n');
}

/** Help for `lsp`. */
export function lspHelp(): string {
  return [
    'gradient-probe lsp --stdio',
    '',
    'Runs the language server and speaks the Language Server Protocol on standard input and',
    'output (--node-ipc, --socket=PORT and --pipe=NAME also work). Editors start it; the',
    'VS Code extension starts the same server.',
    '',
  ].join('\n');
}

function table(rows: readonly (readonly [string, string])[]): string[] {
  const width = Math.max(...rows.map(([a]) => a.length));
  return rows.map(([a, b]) => `  ${a.padEnd(width)}  ${b}`);
}
