// `npm run bench`: speed and scale of Gradient Probe's check, measured. Runs every op at every
// size in its own process (check, evaluation floor, hand-written loop), seeded-bug trials at the
// big sizes, editor latency over LSP, workspace throughput and server memory; prints the table
// and every goal's figure with met / not met, and writes the same figures to
// bench/results/latest.json. Flags: --quick (fewer sizes and trials), --skip=ops,detection,latency,workspace,memory,
// --print=FILE (print the table of a saved run, measuring nothing), --settings=JSON (fields laid over the
// defaults for every check, e.g. '{"stepScans":"mismatch"}'; such a run is never the figure of record).
import { execFile, execFileSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { availableParallelism, cpus, loadavg, platform, tmpdir } from 'node:os';
import { join } from 'node:path';
import { DEFAULT_SETTINGS } from '../server/src/engine/settings';
import { measureLatency } from './lspLatency';
import { OP_KINDS } from './opSources';
import { formatReport } from './report';
import type { BenchReport, DetectionMeasurement, OpMeasurement } from './results';
import { evaluateGoals } from './goals';
import { measureServerMemory, measureThroughput } from './workspace';

const REPO = join(__dirname, '..', '..');
const OUT_DIR = join(REPO, 'bench', 'results');

interface Plan {
  sizes: number[];
  /** Warm check runs per op and size (the median is reported). */
  reps: (size: number) => number;
  /** Untimed check runs between the cold run and the timed ones. */
  warmup: (size: number) => number;
  /** Time the hand-written loop may run before its total is extrapolated, in ms. */
  handBudgetMs: number;
  /** Seeded-bug trials: [kind, elements, bug count, trials]. */
  detection: [string, number, number, number][];
  saves: number;
  throughputRuns: number;
  memoryChecks: number;
}

/** Seeds of the seeded-bug trials start here (any fixed value; consecutive seeds after it). */
const FIRST_TRIAL_SEED = 5000;
/** Relative size of every seeded bug: the smallest bug the check must catch (settings.ts, toleranceF64). */
const BUG_RELATIVE = 1e-4;

function plan(quick: boolean): Plan {
  const detection: Plan['detection'] = [];
  for (const kind of OP_KINDS) {
    for (const count of [1, 3]) {
      detection.push([kind, 100_000, count, quick ? 10 : 50]);
      // 300 trials without a miss put the 95 % lower bound on the catch rate at 0.990.
      // Elsewhere at 1,000,000 fewer trials: each costs seconds (y = Wx's alone needs
      // 4,000 forward calls of a million multiply-adds, past the time limit on this machine).
      const goalRun = kind === 'elementwise' && count === 1;
      const bigTrials = goalRun ? 300 : kind === 'matmul' ? 3 : 10;
      detection.push([kind, 1_000_000, count, quick ? Math.min(bigTrials, goalRun ? 30 : 3) : bigTrials]);
    }
  }
  return {
    sizes: quick ? [10, 1000, 100_000, 1_000_000] : [10, 100, 1000, 10_000, 100_000, 1_000_000],
    reps: (n) => (n >= 1_000_000 ? (quick ? 2 : 3) : n >= 100_000 ? (quick ? 3 : 5) : quick ? 9 : 15),
    warmup: (n) => (n >= 100_000 ? 1 : n >= 10_000 ? 10 : 30),
    handBudgetMs: quick ? 500 : 1500,
    detection,
    saves: quick ? 5 : 15,
    throughputRuns: quick ? 2 : 3,
    memoryChecks: 1000,
  };
}

function runWorker(script: string, args: string[]): Promise<string> {
  return new Promise((resolve, reject) => {
    execFile(process.execPath, [join(__dirname, script), ...args], { cwd: REPO, maxBuffer: 64 * 1024 * 1024 }, (err, stdout, stderr) => {
      if (err) reject(new Error(`${script} ${args.join(' ')} failed: ${stderr || err.message}`));
      else resolve(stdout.trim().split('\n').pop() ?? '');
    });
  });
}

function machine(): BenchReport['machine'] {
  let memory = '';
  try {
    memory = execFileSync('free', ['-h'], { encoding: 'utf8' }).split('\n').find((l) => l.startsWith('Mem:'))?.split(/\s+/)[1] ?? '';
  } catch {
    memory = 'unknown';
  }
  return {
    cpu: cpus()[0]?.model ?? 'unknown',
    cores: typeof availableParallelism === 'function' ? availableParallelism() : cpus().length,
    memory,
    node: process.version,
    platform: `${platform()} ${process.arch}`,
    loadBefore: loadavg(),
    loadAfter: [],
  };
}

function source(): BenchReport['source'] {
  const git = (args: string[]): string => {
    try {
      return execFileSync('git', args, { cwd: REPO, encoding: 'utf8' });
    } catch {
      return '';
    }
  };
  return { commit: git(['rev-parse', '--short', 'HEAD']).trim(), modified: git(['status', '--porcelain', '--', 'server']).split('\n').filter(Boolean).map((l) => l.slice(3)) };
}

async function main(): Promise<void> {
  const saved = process.argv.find((a) => a.startsWith('--print='))?.slice(8);
  if (saved) {
    const report = JSON.parse(readFileSync(saved, 'utf8')) as BenchReport;
    report.goals = evaluateGoals(report); // judged by the current rules
    process.stdout.write(formatReport(report));
    return;
  }
  const quick = process.argv.includes('--quick');
  const skip = new Set((process.argv.find((a) => a.startsWith('--skip='))?.slice(7) ?? '').split(',').filter(Boolean));
  const p = plan(quick);
  const overrides = process.argv.find((a) => a.startsWith('--settings='))?.slice(11);
  const report: BenchReport = {
    version: 1, startedAt: new Date().toISOString(), machine: machine(), settings: { ...DEFAULT_SETTINGS, ...(overrides ? (JSON.parse(overrides) as object) : {}) }, source: source(), ops: [], detection: [], latency: [],
    throughput: null, memory: null, goals: [],
  };
  const log = (line: string): void => void process.stderr.write(`${line}\n`);
  log(`bench: ${report.machine.cpu}, ${report.machine.cores} cores, ${report.machine.memory}, node ${report.machine.node}, load ${report.machine.loadBefore.map((l) => l.toFixed(2)).join(' ')}${quick ? ' (quick)' : ''}`);

  if (!skip.has('ops')) {
    for (const kind of OP_KINDS) {
      for (const size of p.sizes) {
        log(`  op ${kind} ${size}…`);
        const line = await runWorker('opWorker.js', [kind, String(size), String(p.reps(size)), String(p.handBudgetMs), overrides ?? '{}', String(p.warmup(size))]);
        report.ops.push(JSON.parse(line) as OpMeasurement);
      }
    }
  }
  if (!skip.has('detection')) {
    if (overrides) log('  (seeded-bug trials, latency, workspace and memory always use the default settings)');
    for (const [kind, size, count, trials] of p.detection) {
      log(`  seeded bugs ${kind} ${size} ×${count}, ${trials} trials…`);
      const line = await runWorker('detectWorker.js', [kind, String(size), String(count), String(BUG_RELATIVE), String(trials), String(FIRST_TRIAL_SEED)]);
      report.detection.push(JSON.parse(line) as DetectionMeasurement);
    }
  }
  if (!skip.has('latency')) {
    log('  editor latency…');
    report.latency = await measureLatency(REPO, p.saves);
  }
  const scratch = mkdtempSync(join(tmpdir(), 'gradient-probe-workspace-'));
  try {
    if (!skip.has('workspace')) {
      log('  workspace throughput…');
      report.throughput = await measureThroughput(join(scratch, 'ws'), p.throughputRuns);
    }
    if (!skip.has('memory')) {
      log('  server memory…');
      mkdirSync(join(scratch, 'mem'), { recursive: true });
      report.memory = await measureServerMemory(join(scratch, 'mem'), p.memoryChecks);
    }
  } finally {
    rmSync(scratch, { recursive: true, force: true });
  }
  report.machine.loadAfter = loadavg();
  report.goals = evaluateGoals(report);
  process.stdout.write(formatReport(report));
  mkdirSync(OUT_DIR, { recursive: true });
  // Only a full run is the figure of record; a quick or partial run goes beside it.
  const name = quick || skip.size > 0 || overrides ? 'partial.json' : 'latest.json';
  writeFileSync(join(OUT_DIR, name), `${JSON.stringify(report, null, 1)}\n`);
  log(`figures written to bench/results/${name}`);
}

main().catch((e: unknown) => {
  process.stderr.write(`${e instanceof Error ? e.stack ?? e.message : String(e)}\n`);
  process.exitCode = 1;
});
