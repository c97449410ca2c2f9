// `npm run bench`: speed and scale of Gradient Probe's check, measured. Runs every op at every
// size in its own process (check, evaluation floor, hand-written loop), seeded-bug trials at the
// big sizes, editor latency over LSP, workspace throughput and server memory; prints the table
// and every goal's figure with met / not met, and writes the same figures to
// bench/results/latest.json. Flags: --quick (fewer sizes and trials), --skip=ops,detection,latency,workspace,memory,
// --print=FILE (print the table of a saved run, measuring nothing), --settings=JSON (fields laid over the
// defaults for every check, e.g. '{"stepScans":"all"}', which adds the passing op's step picture as
// a report page asks for it; such a run is never the figure of record),
// --kinds=matmul,softmaxVector and --sizes=1000000 (only those op families and sizes, in the op
// table and the seeded-bug trials), --trials=N (at most N trials per seeded-bug row), --out=NAME
// (file name under bench/results/ for a partial run). Any filter makes a partial run.
import { execFile, execFileSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { availableParallelism, cpus, loadavg, platform, tmpdir } from 'node:os';
import { join } from 'node:path';
import { DEFAULT_SETTINGS } from '../server/src/engine/settings';
import { measureLatency } from './lspLatency';
import { DENSE_KINDS, OP_KINDS } from './opSources';
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
  /** Seeded-bug trials: [kind, elements, bug count, trials, parameter with the bug (default: the op's)]. */
  detection: [string, number, number, number, string?][];
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
      // 20 trials: no goal rests on these rows (they show detection across families), and the
      // full run must stay near 30 minutes with the dense goals' 600 trials (PERFORMANCE.md).
      detection.push([kind, 100_000, count, quick ? 10 : 20]);
      // 300 trials without a miss put the 95 % lower bound on the catch rate at 0.990.
      // Elsewhere at 1,000,000 fewer trials: each costs seconds (y = Wx's alone needs
      // 4,000 forward calls of a million multiply-adds, past the time limit on this machine).
      const goalRun = kind === 'elementwise' && count === 1;
      // y = W x's single-bug goal runs have their own rows below (bug in W, bug in x).
      if (kind === 'matmul' && count === 1) continue;
      const bigTrials = goalRun ? 300 : 10;
      detection.push([kind, 1_000_000, count, quick ? Math.min(bigTrials, goalRun ? 30 : 3) : bigTrials]);
    }
  }
  // The dense families — y = W x with the bug in W or in x, 300 trials each for the
  // p ≥ 0.99 bound; a softmax over one vector of 100,000 and 1,000,000.
  detection.push(['matmul', 1_000_000, 1, quick ? 30 : 300, 'weight']);
  detection.push(['matmul', 1_000_000, 1, quick ? 30 : 300, 'x']);
  detection.push(['softmaxVector', 100_000, 1, quick ? 10 : 50]);
  detection.push(['softmaxVector', 1_000_000, 1, quick ? 5 : 20]);
  return {
    sizes: quick ? [10, 1000, 100_000, 1_000_000] : [10, 100, 1000, 10_000, 100_000, 1_000_000],
    reps: (n) => (n >= 1_000_000 ? (quick ? 2 : 3) : n >= 100_000 ? (quick ? 3 : 5) : n >= 10_000 ? (quick ? 9 : 15) : quick ? 15 : 31),
    // Up to 1,000 elements a check takes a few ms, and a runner's time per job keeps falling over
    // its first 100–150 jobs (profileRunner's per-job series, y = W x 110: 1.0–6 ms in jobs 2–100,
    // 0.9–1.3 ms after): 150 untimed checks put the timed ones where a long-lived server runs.
    warmup: (n) => (n >= 100_000 ? 1 : n >= 10_000 ? 10 : 150),
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
    memory =
      execFileSync('free', ['-h'], { encoding: 'utf8' })
        .split('\n')
        .find((l) => l.startsWith('Mem:'))
        ?.split(/\s+/)[1] ?? '';
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
  return {
    commit: git(['rev-parse', '--short', 'HEAD']).trim(),
    modified: git(['status', '--porcelain', '--', 'server'])
      .split('\n')
      .filter(Boolean)
      .map((l) => l.slice(3)),
  };
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
  const listArg = (name: string): string[] | null => {
    const v = process.argv.find((a) => a.startsWith(`--${name}=`))?.slice(name.length + 3);
    return v ? v.split(',').filter(Boolean) : null;
  };
  const kinds = listArg('kinds');
  const sizes = listArg('sizes')?.map(Number) ?? null;
  const maxTrials = Number(listArg('trials')?.[0] ?? Infinity);
  const filters: Record<string, string> = {};
  if (kinds) filters.kinds = kinds.join(',');
  if (sizes) filters.sizes = sizes.join(',');
  if (maxTrials < Infinity) filters.trials = String(maxTrials);
  const wantKind = (k: string): boolean => kinds === null || kinds.includes(k);
  const wantSize = (n: number): boolean => sizes === null || sizes.includes(n);
  const overrides = process.argv.find((a) => a.startsWith('--settings='))?.slice(11);
  const report: BenchReport = {
    version: 1,
    startedAt: new Date().toISOString(),
    machine: machine(),
    settings: { ...DEFAULT_SETTINGS, ...(overrides ? (JSON.parse(overrides) as object) : {}) },
    source: source(),
    ops: [],
    detection: [],
    latency: [],
    throughput: null,
    memory: null,
    goals: [],
  };
  const log = (line: string): void => void process.stderr.write(`${line}\n`);
  log(
    `bench: ${report.machine.cpu}, ${report.machine.cores} cores, ${report.machine.memory}, node ${report.machine.node}, load ${report.machine.loadBefore.map((l) => l.toFixed(2)).join(' ')}${quick ? ' (quick)' : ''}`,
  );

  if (!skip.has('ops')) {
    for (const kind of [...OP_KINDS, ...DENSE_KINDS]) {
      if (!wantKind(kind)) continue;
      for (const size of p.sizes) {
        if (!wantSize(size)) continue;
        log(`  op ${kind} ${size}…`);
        const line = await runWorker('opWorker.js', [kind, String(size), String(p.reps(size)), String(p.handBudgetMs), overrides ?? '{}', String(p.warmup(size))]);
        report.ops.push(JSON.parse(line) as OpMeasurement);
      }
    }
  }
  if (!skip.has('detection')) {
    if (overrides) log('  (seeded-bug trials, latency, workspace and memory always use the default settings)');
    for (const [kind, size, count, planned, param] of p.detection) {
      if (!wantKind(kind) || !wantSize(size)) continue;
      const trials = Math.min(planned, maxTrials);
      log(`  seeded bugs ${kind} ${size} ×${count}${param ? ` in ${param}` : ''}, ${trials} trials…`);
      const line = await runWorker('detectWorker.js', [
        kind,
        String(size),
        String(count),
        String(BUG_RELATIVE),
        String(trials),
        String(FIRST_TRIAL_SEED),
        ...(param ? [param] : []),
      ]);
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
  if (Object.keys(filters).length > 0) report.filters = filters;
  // The run of record before this one, judged by today's rules, printed beside the new figures.
  const previousFile = join(OUT_DIR, 'latest.json');
  if (existsSync(previousFile)) {
    const prev = JSON.parse(readFileSync(previousFile, 'utf8')) as BenchReport;
    report.previous = { startedAt: prev.startedAt, commit: prev.source.commit, goals: evaluateGoals(prev) };
  }
  process.stdout.write(formatReport(report));
  mkdirSync(OUT_DIR, { recursive: true });
  // Only a full run is the figure of record; a quick or partial run goes beside it.
  const partial = quick || skip.size > 0 || overrides || Object.keys(filters).length > 0;
  const out = listArg('out')?.[0];
  const name = partial ? (out ? `${out.replace(/[^\w.-]/g, '_').replace(/\.json$/, '')}.json` : 'partial.json') : 'latest.json';
  writeFileSync(join(OUT_DIR, name), `${JSON.stringify(report, null, 1)}\n`);
  log(`figures written to bench/results/${name}`);
}

main().catch((e: unknown) => {
  process.stderr.write(`${e instanceof Error ? (e.stack ?? e.message) : String(e)}\n`);
  process.exitCode = 1;
});
