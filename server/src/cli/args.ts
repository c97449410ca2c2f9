// Command-line argument parsing for `gradient-probe`: one table of the `check` flags, shared by
// the parser and the help text, and usage errors that name the offending flag.

import type { CheckSettings } from '../engine/settings';
import { checkSettingValue } from '../project/config';
import { nearestName } from '../text/nearestName';

/** When the human output uses colour. */
export type ColorMode = 'auto' | 'always' | 'never';

/** Everything `gradient-probe check` was asked to do. */
export interface CheckOptions {
  paths: string[];
  json: boolean;
  sarif?: string;
  junit?: string;
  filter?: string;
  config?: string;
  workers?: number;
  /** Settings given as flags; they win over the configuration file. */
  overrides: Partial<CheckSettings>;
  failOnInconclusive: boolean;
  /** Exit 1 when code of a backward never ran during its check (coverage). */
  failOnUnreached?: boolean;
  /** Skip the coverage pass (on by default: a second run of each check in coverage runners). */
  noCoverage?: boolean;
  /** Run ops in the isolated interpreter instead of the runner process (settings.isolation). */
  isolated?: boolean;
  onlyProblems: boolean;
  color: ColorMode;
  /** `--allow-unfinished`: an op the time limit stopped early does not fail the run. */
  allowUnfinished: boolean;
  /** `--shard K/N`: check only part K (1-based) of N of the ops. */
  shard?: Shard;
  /** `--changed-since REF`: check only ops whose bundle inputs changed since this git revision. */
  changedSince?: string;
}

/** Part `index` (1-based) of `count` equal-chance parts of the ops. */
export interface Shard {
  index: number;
  count: number;
}

export type CliCommand =
  | { kind: 'check'; options: CheckOptions }
  /** `merge REPORT.json ...`: the report files are `options.paths`; only output flags apply. */
  | { kind: 'merge'; options: CheckOptions }
  | { kind: 'lsp'; transportArgs: string[] }
  | { kind: 'help'; command?: 'check' | 'lsp' | 'merge' }
  | { kind: 'version' };

/** A mistake in the command line; `flag` is the flag or argument it concerns. */
export class UsageError extends Error {
  flag?: string;
  constructor(message: string, flag?: string) {
    super(message);
    this.name = 'UsageError';
    if (flag !== undefined) this.flag = flag;
  }
}

/** One flag of `check`. */
export interface FlagSpec {
  name: string;
  /** Placeholder of its value, absent for switches. */
  value?: string;
  description: string;
  apply: (options: CheckOptions, value: string) => void;
}

/** Flags of `check`, in help order. */
export const CHECK_FLAGS: readonly FlagSpec[] = [
  {
    name: '--json',
    description: 'write the version-1 JSON report to stdout and nothing else',
    apply: (o) => {
      o.json = true;
    },
  },
  {
    name: '--sarif',
    value: 'FILE',
    description: 'also write the results as SARIF 2.1.0 (for code-scanning views)',
    apply: (o, v) => {
      o.sarif = v;
    },
  },
  {
    name: '--junit',
    value: 'FILE',
    description: 'also write the results as JUnit XML (one test case per op)',
    apply: (o, v) => {
      o.junit = v;
    },
  },
  {
    name: '--filter',
    value: 'TEXT',
    description: 'check only ops whose forward name contains TEXT',
    apply: (o, v) => {
      o.filter = v;
    },
  },
  { name: '--seed', value: 'N', description: "seed of the input generator (an op's @seed still wins)", apply: setting('seed', '--seed') },
  {
    name: '--tolerance',
    value: 'REL',
    description: "relative tolerance for float64 and number ops (an op's @tolerance still wins)",
    apply: setting('toleranceF64', '--tolerance'),
  },
  { name: '--tolerance-f32', value: 'REL', description: 'relative tolerance for float32 ops', apply: setting('toleranceF32', '--tolerance-f32') },
  { name: '--time-limit', value: 'MS', description: "wall-clock limit of one op's check, in milliseconds", apply: setting('timeLimitMs', '--time-limit') },
  { name: '--memory-limit', value: 'MB', description: 'memory limit of each runner process, in MiB', apply: setting('memoryLimitMb', '--memory-limit') },
  {
    name: '--workers',
    value: 'N',
    description: 'runner processes working in parallel (default: chosen from the cores)',
    apply: (o, v) => {
      o.workers = parseWorkers(v);
    },
  },
  {
    name: '--config',
    value: 'FILE',
    description: 'read this configuration file instead of searching for gradient-probe.json',
    apply: (o, v) => {
      o.config = v;
    },
  },
  {
    name: '--isolated',
    description: 'run ops in the isolated interpreter (WebAssembly, no Node API; 35-50x slower, for small ops)',
    apply: (o) => {
      o.isolated = true;
    },
  },
  {
    name: '--shard',
    value: 'K/N',
    description: 'check only part K of N of the ops (stable by file and forward name); N jobs together check each op once',
    apply: (o, v) => {
      o.shard = parseShard(v);
    },
  },
  {
    name: '--changed-since',
    value: 'REF',
    description: 'check only ops whose file or imported files changed since git revision REF; says how many were skipped',
    apply: (o, v) => {
      o.changedSince = v;
    },
  },
  {
    name: '--fail-on-inconclusive',
    description: 'exit 1 when an op is inconclusive, too',
    apply: (o) => {
      o.failOnInconclusive = true;
    },
  },
  {
    name: '--allow-unfinished',
    description: "exit 0 although the time limit stopped an op's check before every element was compared",
    apply: (o) => {
      o.allowUnfinished = true;
    },
  },
  {
    name: '--fail-on-unreached',
    description: 'exit 1 when code of a backward (or a helper it calls) never ran during its check',
    apply: (o) => {
      o.failOnUnreached = true;
    },
  },
  {
    name: '--no-coverage',
    description: 'skip the coverage pass (a second run of each check that records which code ran)',
    apply: (o) => {
      o.noCoverage = true;
    },
  },
  {
    name: '--only-problems',
    description: 'list only ops that did not pass (the summary still counts all)',
    apply: (o) => {
      o.onlyProblems = true;
    },
  },
  {
    name: '--color',
    value: 'WHEN',
    description: 'colour the table: auto (a terminal without NO_COLOR), always or never',
    apply: (o, v) => {
      o.color = parseColorMode(v);
    },
  },
  {
    name: '--no-color',
    description: 'same as --color never',
    apply: (o) => {
      o.color = 'never';
    },
  },
];

/** Transport flags the language server understands (passed on unchanged). */
const LSP_TRANSPORTS = ['--stdio', '--node-ipc', '--socket', '--pipe'];
/** Most runner processes a user may ask for: far above any machine's useful parallelism. */
const MAX_WORKERS = 256;

/** Parses `process.argv.slice(2)`. Throws UsageError naming the flag. */
export function parseArgs(argv: readonly string[]): CliCommand {
  const [command, ...rest] = argv;
  if (command === undefined) throw new UsageError('no command given (try "gradient-probe check")');
  if (command === '--help' || command === '-h' || command === 'help') {
    const topic = rest[0];
    return topic === 'check' || topic === 'lsp' || topic === 'merge' ? { kind: 'help', command: topic } : { kind: 'help' };
  }
  if (command === '--version' || command === '-v') return { kind: 'version' };
  if (command === 'check') return parseCheck(rest);
  if (command === 'merge') return parseMerge(rest);
  if (command === 'lsp') return parseLsp(rest);
  const guess = nearestName(command, ['check', 'merge', 'lsp', 'help']);
  throw new UsageError(`unknown command "${command}"${guess ? ` (did you mean "${guess}"?)` : ''}`, command);
}

/** Flags of `merge`: how to write the joined report and which results fail it. */
export const MERGE_FLAGS: readonly FlagSpec[] = CHECK_FLAGS.filter((f) =>
  ['--json', '--sarif', '--junit', '--fail-on-inconclusive', '--allow-unfinished', '--only-problems', '--color', '--no-color'].includes(f.name),
);

function parseMerge(args: readonly string[]): CliCommand {
  const parsed = parseFlags(args, MERGE_FLAGS, 'merge');
  if (parsed === 'help') return { kind: 'help', command: 'merge' };
  if (parsed.paths.length === 0) throw new UsageError('merge needs the report files to join (written by check --json)', 'merge');
  return { kind: 'merge', options: parsed };
}

function parseCheck(args: readonly string[]): CliCommand {
  const parsed = parseFlags(args, CHECK_FLAGS, 'check');
  return parsed === 'help' ? { kind: 'help', command: 'check' } : { kind: 'check', options: parsed };
}

function parseFlags(args: readonly string[], flags: readonly FlagSpec[], command: string): CheckOptions | 'help' {
  const options: CheckOptions = {
    paths: [],
    json: false,
    overrides: {},
    failOnInconclusive: false,
    onlyProblems: false,
    color: 'auto',
    allowUnfinished: false,
  };
  const seen = new Set<string>();
  let flagsEnded = false;
  for (let i = 0; i < args.length; i++) {
    const arg = args[i]!;
    if (flagsEnded || !arg.startsWith('-') || arg === '-') {
      options.paths.push(arg);
      continue;
    }
    if (arg === '--') {
      flagsEnded = true;
      continue;
    }
    if (arg === '--help' || arg === '-h') return 'help';
    const eq = arg.indexOf('=');
    const name = eq > 0 ? arg.slice(0, eq) : arg;
    const spec = flags.find((f) => f.name === name);
    if (!spec) {
      const guess = nearestName(
        name,
        flags.map((f) => f.name),
      );
      const elsewhere = command === 'merge' && CHECK_FLAGS.some((f) => f.name === name) ? ' (it belongs to check; merge only joins reports)' : '';
      throw new UsageError(`unknown flag ${name}${guess ? ` (did you mean ${guess}?)` : elsewhere}`, name);
    }
    if (seen.has(name)) throw new UsageError(`${name} is given more than once`, name);
    seen.add(name);
    let value = '';
    if (spec.value !== undefined) {
      if (eq > 0) value = arg.slice(eq + 1);
      else {
        const next = args[i + 1];
        if (next === undefined || (next.startsWith('--') && next.length > 2)) {
          throw new UsageError(`${name} needs a value (${spec.value})`, name);
        }
        value = next;
        i++;
      }
      if (value === '') throw new UsageError(`${name} needs a value (${spec.value})`, name);
    } else if (eq > 0) {
      throw new UsageError(`${name} takes no value`, name);
    }
    spec.apply(options, value);
  }
  return options;
}

function parseLsp(args: readonly string[]): CliCommand {
  if (args.includes('--help') || args.includes('-h')) return { kind: 'help', command: 'lsp' };
  const transport = args.find((a) => LSP_TRANSPORTS.some((t) => a === t || a.startsWith(`${t}=`)));
  if (!transport) throw new UsageError('lsp needs a transport: --stdio (or --node-ipc, --socket=PORT, --pipe=NAME)', 'lsp');
  return { kind: 'lsp', transportArgs: [...args] };
}

/** A flag that sets one check setting, validated by the configuration's own rules. */
function setting(key: keyof CheckSettings, flag: string): FlagSpec['apply'] {
  return (options, text) => {
    const value = parseNumber(text);
    const expected = checkSettingValue(key, value);
    if (expected !== undefined) throw new UsageError(`${flag} must be ${expected}, got ${JSON.stringify(text)}`, flag);
    (options.overrides as Record<string, unknown>)[key] = value;
  };
}

function parseWorkers(text: string): number {
  const n = parseNumber(text);
  if (typeof n !== 'number' || !Number.isSafeInteger(n) || n < 1 || n > MAX_WORKERS) {
    throw new UsageError(`--workers must be an integer from 1 to ${MAX_WORKERS}, got ${JSON.stringify(text)}`, '--workers');
  }
  return n;
}

/** `K/N` with 1 ≤ K ≤ N: the CI matrix's job number and size. */
function parseShard(text: string): Shard {
  const m = /^(\d+)\/(\d+)$/.exec(text.trim());
  const index = m ? Number(m[1]) : NaN;
  const count = m ? Number(m[2]) : NaN;
  if (!m || !Number.isSafeInteger(count) || count < 1 || index < 1 || index > count) {
    throw new UsageError(`--shard must be K/N with 1 ≤ K ≤ N (this job's number and the number of jobs), got ${JSON.stringify(text)}`, '--shard');
  }
  return { index, count };
}

function parseColorMode(text: string): ColorMode {
  if (text === 'auto' || text === 'always' || text === 'never') return text;
  throw new UsageError(`--color must be auto, always or never, got ${JSON.stringify(text)}`, '--color');
}

/** Decimal text to a number; anything else stays text so the error shows what was typed. */
function parseNumber(text: string): number | string {
  return /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(text.trim()) ? Number(text) : text;
}
