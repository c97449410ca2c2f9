// One op at one size, in its own process: Gradient Probe's check through the Checker (the
// runner the CLI and the server use), the evaluation floor of the method it picked, and the
// hand-written loop, side by side. Prints one JSON line (OpMeasurement) on stdout.
// Usage: node dist/bench/opWorker.js KIND ELEMENTS REPS HAND_BUDGET_MS [SETTINGS_JSON] [WARMUP]
// (SETTINGS_JSON: fields laid over DEFAULT_SETTINGS, e.g. '{"stepScans":"all"}': the passing op's
// step picture too, as the editor's report page asks for it; '{}' the defaults).
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { bindingsOf, Checker, listOps } from '../server/src/core/checker';
import { ROOT_PROBES } from '../server/src/engine/splitSearch';
import { DEFAULT_SETTINGS, type CheckSettings } from '../server/src/engine/settings';
import type { OpResult } from '../server/src/model/types';
import { Bundler } from '../server/src/sandbox/bundle';
import { directOp } from './directOp';
import { loadInContext } from './evalContext';
import { median, timeFloor, type CallBudget } from './floor';
import { runHandLoopMedian } from './handLoop';
import { benchOp, type BenchOp, type OpKind } from './opSources';
import type { OpMeasurement } from './results';

/** Seed of the benchmark's inputs (any fixed value; the check uses the default settings' seed). */
const INPUT_SEED = 20240917;
/** Complete runs of the hand-written loop whose median is its time (handLoop.ts). */
const HAND_LOOP_RUNS = 5;

/**
 * Calls the method the check picked needs at least, per interface of each method: one baseline
 * forward; per parameter, 2 forwards per element (full), per colour class of the cheapest exact
 * grouping (grouped), or 4 per root probe (dot-product: two central differences); one backward
 * per upstream probe (and per dot-product probe). A method op re-runs its forward before each
 * backward after the first, because its backward reads what the forward cached.
 */
export function floorBudget(op: BenchOp, result: OpResult, s: CheckSettings): CallBudget {
  let forwards = 1;
  let backwards = Math.max(1, s.upstreamProbes);
  let dot = false;
  for (const p of op.params) {
    // A check stopped before it reported the parameter: the floor of the cheapest exact scheme.
    const r = result.params.find((q) => q.name === p.name);
    const method = r?.method ?? 'grouped';
    if (method === 'full') forwards += 2 * p.elements;
    else if (method === 'grouped') forwards += 2 * p.optimalColours;
    else {
      // Probes: ROOT_PROBES probes of two central differences each at least (Ridders needs two
      // steps for an error estimate).
      dot = true;
      forwards += 4 * ROOT_PROBES;
    }
  }
  if (dot) backwards += s.dotProductProbes;
  if (op.isMethod) forwards += backwards - 1;
  return { forwards, backwards };
}

async function main(): Promise<void> {
  const [kind, elementsText, repsText, budgetText, overridesText, warmupText] = process.argv.slice(2);
  const overrides = overridesText && overridesText !== '{}' ? overridesText : undefined;
  const warmup = Number(warmupText ?? 0);
  const settings: CheckSettings = { ...DEFAULT_SETTINGS, ...(overrides ? (JSON.parse(overrides) as Partial<CheckSettings>) : {}) };
  const op = benchOp(kind as OpKind, Number(elementsText));
  const reps = Number(repsText);
  const handBudgetMs = Number(budgetText);
  const dir = mkdtempSync(join(tmpdir(), 'gradient-probe-bench-'));
  const file = join(dir, op.fileName);
  writeFileSync(file, op.text);
  const checker = new Checker({ settings, workers: 1 });
  try {
    // Check: one cold run (runner start, first bundle), `warmup` untimed runs (the runner's host
    // code and the engine's shared bytecode warm up over the first dozens of jobs), then `reps`.
    let t = performance.now();
    const first = (await checker.checkFile(file))[0];
    const coldMs = performance.now() - t;
    if (!first) throw new Error(`no op found in ${file}`);
    for (let w = 0; w < warmup; w++) await checker.checkFile(file);
    const wallMs: number[] = [];
    const runnerMs: number[] = [];
    let last = first;
    for (let r = 0; r < reps; r++) {
      t = performance.now();
      const res = (await checker.checkFile(file))[0];
      wallMs.push(performance.now() - t);
      if (res) {
        runnerMs.push(res.elapsedMs);
        last = res;
      }
    }

    // Floor and hand-written loop on the same bundle, in a context like the runner's.
    const listing = listOps(file);
    const bundle = await new Bundler().bundle({ file, text: op.text, bindings: listing.ops.flatMap(bindingsOf) });
    if (!bundle.ok) throw new Error(bundle.message);
    const d = directOp(op, loadInContext(bundle.code, DEFAULT_SETTINGS.seed), INPUT_SEED);
    const budget = floorBudget(op, last, settings);
    const floorReps = Math.max(3, Math.min(reps, 9));
    const floor = timeFloor(d, budget, floorReps);
    // The loop's median over up to HAND_LOOP_RUNS complete runs, like the check's median over its reps.
    const hand = runHandLoopMedian(d, handBudgetMs, 16, HAND_LOOP_RUNS);

    const m: OpMeasurement = {
      kind: op.kind,
      forward: op.forward,
      shape: op.shape,
      elements: op.elements,
      outputs: op.outputs,
      verdict: last.verdict,
      message: last.message,
      methods: last.params.map((p) => `${p.name}:${p.method}`),
      coverage: last.params.reduce((a, p) => a + p.checkedElements, 0) / op.elements,
      calls: last.calls,
      check: { coldMs, warmupRuns: warmup, wallMs, medianMs: median(wallMs), runnerMedianMs: median(runnerMs) },
      floor: { calls: budget, medianMs: floor.medianMs, reps: floorReps, forwardMs: floor.forwardMs, backwardMs: floor.backwardMs, fromPerCall: floor.fromPerCall },
      hand,
    };
    process.stdout.write(`${JSON.stringify(m)}\n`);
  } finally {
    await checker.dispose();
    rmSync(dir, { recursive: true, force: true });
  }
}

main().catch((e: unknown) => {
  process.stderr.write(`${e instanceof Error ? (e.stack ?? e.message) : String(e)}\n`);
  process.exitCode = 1;
});
