// The performance goals (README, "Performance"; bench/PERFORMANCE.md), each judged from the measured figures: one line per goal with its figure
// and met / not met, so the printed table, the JSON file and the performance notes agree.
import type { BenchReport, GoalLine, OpMeasurement } from './results';

/** Goal thresholds, as bench/PERFORMANCE.md's goals table states them. */
export const GOALS = {
  /** Check of a passing op ÷ its evaluation floor, once warm. */
  floorRatio: 1.2,
  /** Hand-written loop ÷ check at and above bigElements. */
  bigSpeedup: 10,
  bigElements: 100_000,
  /** A 1,000,000-element parameter: time, in ms, and catch probability (95 % lower bound). */
  millionMs: 2000,
  millionCatch: 0.99,
  warmSaveMs: 300,
  coldMs: 1500,
  workerSpeedup: 1.7,
  memoryGrowth: 0.1,
} as const;

const f1 = (x: number): string => x.toFixed(1);
const f2 = (x: number): string => x.toFixed(2);
const ms = (x: number): string => (x >= 10_000 ? `${(x / 1000).toFixed(1)} s` : `${x >= 100 ? x.toFixed(0) : x.toFixed(1)} ms`);

export function floorRatio(m: OpMeasurement): number {
  return m.check.medianMs / m.floor.medianMs;
}

export function handSpeedup(m: OpMeasurement): number {
  return m.hand.totalMs / m.check.medianMs;
}

export function evaluateGoals(r: BenchReport): GoalLine[] {
  const goals: GoalLine[] = [];
  const passing = r.ops.filter((m) => m.verdict === 'pass');
  if (r.ops.length > 0) {
    const within = passing.filter((m) => floorRatio(m) <= GOALS.floorRatio);
    const bySize = new Map<number, number[]>();
    for (const m of passing) {
      const key = Math.pow(10, Math.round(Math.log10(m.elements)));
      bySize.set(key, [...(bySize.get(key) ?? []), floorRatio(m)]);
    }
    const trend = [...bySize.entries()].sort((a, b) => a[0] - b[0]).map(([n, xs]) => `${n.toLocaleString('en-US')}: ${f1(Math.min(...xs))}–${f1(Math.max(...xs))}×`).join('; ');
    goals.push({
      goal: `full check of a passing op ≤ ${GOALS.floorRatio}× its evaluation floor (warm)`,
      figure: `${within.length} of ${passing.length} op sizes within; check ÷ floor by size ${trend}${passing.length < r.ops.length ? `; ${r.ops.length - passing.length} op sizes did not pass` : ''}`,
      met: passing.length > 0 && within.length === passing.length && passing.length === r.ops.length,
    });
    const equal = r.ops.filter((m) => m.coverage >= 1);
    const slower = equal.filter((m) => handSpeedup(m) < 1);
    const big = equal.filter((m) => m.elements >= GOALS.bigElements);
    const bigShort = big.filter((m) => handSpeedup(m) < GOALS.bigSpeedup);
    const minBig = big.length ? Math.min(...big.map(handSpeedup)) : NaN;
    goals.push({
      goal: 'never slower than the hand-written loop at equal detection (every element compared)',
      figure: `${slower.length} of ${equal.length} op sizes slower${slower.length ? ` (${slower.map((m) => `${m.kind} ${m.elements.toLocaleString('en-US')}: ${f2(handSpeedup(m))}×`).join(', ')})` : ''}${equal.length < r.ops.length ? `; ${r.ops.length - equal.length} op sizes checked only a subset, not compared` : ''}`,
      met: equal.length > 0 && slower.length === 0,
    });
    goals.push({
      goal: `≥ ${GOALS.bigSpeedup}× faster than the hand-written loop from ${GOALS.bigElements.toLocaleString('en-US')} elements`,
      figure: big.length ? `smallest speed-up ${f1(minBig)}× (${big.length} op sizes; the loop's time is extrapolated from the elements it reached)${bigShort.length ? `; short: ${bigShort.map((m) => `${m.kind} ${m.elements.toLocaleString('en-US')} ${f1(handSpeedup(m))}×`).join(', ')}` : ''}` : 'not measured',
      met: big.length > 0 ? bigShort.length === 0 : null,
    });
  }
  // The layer's three fields of 333,333 make 999,999 elements: it belongs to the million class.
  const million = r.detection.filter((d) => d.elements >= 999_000 && d.bugCount === 1);
  for (const d of million) {
    const isGoalRun = d.kind === 'elementwise';
    goals.push({
      goal: `${isGoalRun ? '' : '(same, other op) '}1,000,000-element ${d.kind} op in < ${GOALS.millionMs / 1000} s, single wrong element caught with p ≥ ${GOALS.millionCatch}`,
      figure: `caught ${d.caught}/${d.trials} (located ${d.located}), 95 % lower bound ${d.lowerBound95.toFixed(3)}${d.lowerBound95 < GOALS.millionCatch && d.caught === d.trials ? ` (${d.trials} trials cannot bound p at ${GOALS.millionCatch}; 300 can)` : ''}; check median ${ms(d.medianMs)}, max ${ms(d.maxMs)}`,
      // Every bug caught in time but too few trials to bound p at 0.99: neither met nor failed.
      met: d.medianMs >= GOALS.millionMs || d.caught < d.trials ? false : d.lowerBound95 >= GOALS.millionCatch ? true : null,
    });
  }
  if (r.latency.length > 0) {
    const warm = Math.max(...r.latency.map((l) => l.warmMedianMs));
    const warmP90 = Math.max(...r.latency.map((l) => l.warmP90Ms));
    const cold = Math.max(...r.latency.map((l) => l.coldOpenMs));
    const start = Math.max(...r.latency.map((l) => l.coldStartMs));
    goals.push({
      goal: `warm save → diagnostics < ${GOALS.warmSaveMs} ms (demo files)`,
      figure: `worst file median ${ms(warm)}, worst file p90 ${ms(warmP90)}`,
      met: warm < GOALS.warmSaveMs,
    });
    goals.push({
      goal: `cold → diagnostics < ${GOALS.coldMs / 1000} s (fresh server: didOpen → diagnostics)`,
      figure: `worst file ${ms(cold)}; before that, process spawn → initialized took up to ${ms(start)}`,
      met: cold < GOALS.coldMs,
    });
  }
  if (r.throughput) {
    const t = r.throughput;
    goals.push({
      goal: `check-workspace with 2 workers ≥ ${GOALS.workerSpeedup}× faster than with 1`,
      figure: `${t.ops} ops in ${t.files} files: 1 worker ${ms(t.checker[0].medianMs)}, 2 workers ${ms(t.checker[1].medianMs)} → ${f2(t.speedup)}×; CLI end to end ${ms(t.cli[0].medianMs)} → ${ms(t.cli[1].medianMs)} (${f2(t.cliSpeedup)}×)`,
      met: t.speedup >= GOALS.workerSpeedup,
    });
  }
  if (r.memory) {
    const m = r.memory;
    const i100 = m.checks.indexOf(100);
    goals.push({
      goal: `server memory flat within ${GOALS.memoryGrowth * 100} % from check 100 to ${m.checks[m.checks.length - 1]}`,
      figure: `server RSS ${f1(m.serverRssMb[i100])} → ${f1(m.serverRssMb[m.serverRssMb.length - 1])} MiB (${(100 * m.growth100to1000).toFixed(1)} %); runners ${f1(m.runnerRssMb[i100])} → ${f1(m.runnerRssMb[m.runnerRssMb.length - 1])} MiB`,
      met: m.growth100to1000 <= GOALS.memoryGrowth,
    });
  }
  return goals;
}
