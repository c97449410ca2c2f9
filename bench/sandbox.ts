// Benchmark of the sandbox's own costs (prints figures; not a test): cold start to the first
// result, warm per-op overhead of a trivial op, bundle time cold and cached, and a numeric op's
// check in this process against the same check in a runner.
// Run: npx esbuild bench/sandbox.ts --bundle --platform=node --packages=external \
//        --outfile=dist/bench/sandbox.js && node dist/bench/sandbox.js   (after npm run build)
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { bindingsOf, Checker, listOps } from '../server/src/core/checker';
import { runCheck } from '../server/src/engine/check';
import { DEFAULT_SETTINGS } from '../server/src/engine/settings';
import * as denseTanhModule from '../test/fixtures/sandbox/denseTanh';
import { Bundler } from '../server/src/sandbox/bundle';
import { RunnerPool } from '../server/src/sandbox/pool';

const FIXTURES = join(process.cwd(), 'test', 'fixtures', 'sandbox');
const WARM_RUNS = 200;
const NUMERIC_RUNS = 7;

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)] ?? NaN;
}

function ms(x: number): string {
  return `${x.toFixed(2)} ms`;
}

async function coldStart(): Promise<void> {
  const started = performance.now();
  const checker = new Checker({ settings: DEFAULT_SETTINGS, workers: 1 });
  let first = NaN;
  const results = await checker.checkFile(join(FIXTURES, 'trivial.ts'), {
    onResult: () => {
      if (Number.isNaN(first)) first = performance.now() - started;
    },
  });
  console.log(`cold start → first result (new Checker, discovery, bundle, spawn, check): ${ms(first)}  [verdict ${results[0]?.verdict}]`);
  console.log(`isolation: ${checker.isolation()?.summary}`);
  await checker.dispose();
}

async function warmOverhead(): Promise<void> {
  const file = join(FIXTURES, 'trivial.ts');
  const listing = listOps(file);
  const op = listing.ops[0];
  if (!op) throw new Error('trivial fixture has no op');
  const bundle = await new Bundler().bundle({ file, text: readFileSync(file, 'utf8'), bindings: bindingsOf(op) });
  if (!bundle.ok) throw new Error(bundle.message);
  const pool = new RunnerPool({ size: 1 });
  const roundTrips: number[] = [];
  const inRunner: number[] = [];
  for (let i = 0; i < WARM_RUNS + 5; i++) {
    const t = performance.now();
    const r = await pool.run({ bundleKey: bundle.key, bundleCode: bundle.code, op, settings: DEFAULT_SETTINGS });
    const dt = performance.now() - t;
    if (!('outcome' in r)) throw new Error(r.error);
    if (i >= 5) {
      roundTrips.push(dt);
      inRunner.push(r.elapsedMs);
    }
  }
  console.log(
    `warm trivial op, ${WARM_RUNS} runs on one runner: round trip median ${ms(median(roundTrips))}; inside the runner (fresh context + engine + module + check) median ${ms(median(inRunner))}; IPC and scheduling ≈ ${ms(median(roundTrips) - median(inRunner))}`,
  );
  await pool.dispose();
}

async function bundleTimes(): Promise<void> {
  const file = join(FIXTURES, 'withdeps', 'ops.ts');
  const text = readFileSync(file, 'utf8');
  const bindings = bindingsOf(listOps(file).ops[0]!);
  const bundler = new Bundler();
  let t = performance.now();
  await bundler.bundle({ file, text, bindings });
  const firstInProcess = performance.now() - t;
  const rebuilds: number[] = [];
  for (let i = 0; i < 10; i++) {
    t = performance.now();
    await bundler.bundle({ file, text: `${text}\n// edit ${i}\n`, bindings });
    rebuilds.push(performance.now() - t);
  }
  const hits: number[] = [];
  for (let i = 0; i < 50; i++) {
    t = performance.now();
    await bundler.bundle({ file, text, bindings });
    hits.push(performance.now() - t);
  }
  console.log(
    `bundle (relative import + package): first in process ${ms(firstInProcess)}; changed text median ${ms(median(rebuilds))}; cache hit (re-validating inputs) median ${ms(median(hits))}  [builds ${bundler.stats.builds}, hits ${bundler.stats.cacheHits}]`,
  );
}

/** The same check in this process (plain functions) and in a warm runner (vm context, bundle). */
async function numericOverhead(): Promise<void> {
  const file = join(FIXTURES, 'denseTanh.ts');
  const op = listOps(file).ops[0];
  if (!op) throw new Error('denseTanh fixture has no op');
  const inProcess: number[] = [];
  let calls = '';
  for (let i = 0; i < NUMERIC_RUNS; i++) {
    const t = performance.now();
    const outcome = runCheck({ ...denseTanhModule }, { op, settings: DEFAULT_SETTINGS }, () => performance.now());
    inProcess.push(performance.now() - t);
    calls = `${outcome.verdict}, ${outcome.calls.forward} forward / ${outcome.calls.backward} backward calls, method ${outcome.params.map((p) => p.method).join('+')}`;
  }
  const bundle = await new Bundler().bundle({ file, text: readFileSync(file, 'utf8'), bindings: bindingsOf(op) });
  if (!bundle.ok) throw new Error(bundle.message);
  const pool = new RunnerPool({ size: 1 });
  const sandboxed: number[] = [];
  for (let i = 0; i < NUMERIC_RUNS + 1; i++) {
    const r = await pool.run({ bundleKey: bundle.key, bundleCode: bundle.code, op, settings: DEFAULT_SETTINGS });
    if (!('outcome' in r)) throw new Error(r.error);
    if (i > 0) sandboxed.push(r.elapsedMs);
  }
  await pool.dispose();
  const a = median(inProcess);
  const b = median(sandboxed);
  console.log(`64×64 dense+tanh check (${calls}): in this process median ${ms(a)}; in a warm runner median ${ms(b)} (×${(b / a).toFixed(2)})`);
}

async function main(): Promise<void> {
  console.log(`node ${process.version}, ${DEFAULT_SETTINGS.timeLimitMs} ms limit, ${DEFAULT_SETTINGS.memoryLimitMb} MiB memory limit`);
  await bundleTimes();
  await coldStart();
  await warmOverhead();
  await numericOverhead();
}

void main();
