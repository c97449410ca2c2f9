// Benchmark of coverage's cost (prints figures; not a test): per op, the same check in a
// permission runner and in a coverage runner (V8 block coverage with call counts), the mapping
// of the coverage onto the user's code in this process, and a whole file checked by the
// Checker with coverage off and on.
// Run: npx esbuild bench/coverage.ts --bundle --platform=node --packages=external \
//        --outfile=dist/bench/coverage.js && node dist/bench/coverage.js   (after npm run build)
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { bindingsOf, Checker, listOps } from '../server/src/core/checker';
import { DEFAULT_SETTINGS } from '../server/src/engine/settings';
import { Bundler } from '../server/src/sandbox/bundle';
import { opCoverage } from '../server/src/sandbox/coverageMap';
import { RunnerPool } from '../server/src/sandbox/pool';

const FILES = [
  'test/fixtures/sandbox/trivial.ts',
  'test/fixtures/sandbox/denseTanh.ts',
  'test/corpus/layers.ts',
  'test/corpus/elementwise.ts',
  'test/corpus/kinks.ts',
  'examples/src/dawn.ts',
];
const RUNS = 7;
const FILE_RUNS = 5;

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)] ?? NaN;
}

async function perOp(): Promise<void> {
  const plain = new RunnerPool({ size: 1 });
  const covered = new RunnerPool({ size: 1, coverage: true });
  const bundler = new Bundler();
  const settings = { ...DEFAULT_SETTINGS, stepScans: 'mismatch' as const };
  console.log('op                              plain runner   coverage runner   ratio   mapping');
  const ratios: number[] = [];
  try {
    for (const rel of FILES) {
      const file = join(process.cwd(), rel);
      const text = readFileSync(file, 'utf8');
      const ops = listOps(file, text).ops.filter((op) => op.problems.length === 0);
      const bundle = await bundler.bundle({ file, text, bindings: ops.flatMap(bindingsOf) });
      if (!bundle.ok) throw new Error(bundle.message);
      for (const op of ops) {
        const job = { bundleKey: bundle.key, bundleCode: bundle.code, op, settings };
        const a: number[] = [];
        const b: number[] = [];
        const m: number[] = [];
        for (let i = 0; i < RUNS; i++) {
          // Alternate, so load on the machine falls on both alike.
          const p = await plain.run(job);
          const c = await covered.run(job);
          if (!('outcome' in p) || !('outcome' in c) || !c.coverage) throw new Error(`${op.forward}: a run failed`);
          a.push(p.elapsedMs);
          b.push(c.elapsedMs);
          const t0 = performance.now();
          opCoverage({ op, checkedText: text, bundleCode: bundle.code, segments: bundle.segments(), blocks: c.coverage });
          m.push(performance.now() - t0);
        }
        const ratio = median(b) / median(a);
        ratios.push(ratio);
        console.log(
          `${op.forward.padEnd(30)}  ${median(a).toFixed(1).padStart(9)} ms  ${median(b).toFixed(1).padStart(12)} ms  ${ratio.toFixed(2).padStart(5)}×  ${median(m).toFixed(1).padStart(5)} ms`,
        );
      }
    }
  } finally {
    await Promise.all([plain.dispose(), covered.dispose()]);
  }
  console.log(`median ratio coverage runner / plain runner over ${ratios.length} ops: ${median(ratios).toFixed(2)}×`);
}

async function perFile(): Promise<void> {
  console.log('\nfile (Checker, 1 worker; coverage on = verdict run, then coverage run + mapping)   off      on');
  for (const rel of FILES) {
    const file = join(process.cwd(), rel);
    const times: Record<'off' | 'on', number[]> = { off: [], on: [] };
    for (const mode of ['off', 'on'] as const) {
      const checker = new Checker({ settings: DEFAULT_SETTINGS, workers: 1, coverage: mode === 'on' });
      try {
        await checker.checkFile(file); // warm: runners started, bundle cached
        for (let i = 0; i < FILE_RUNS; i++) {
          const t0 = performance.now();
          await checker.checkFile(file);
          times[mode].push(performance.now() - t0);
        }
      } finally {
        await checker.dispose();
      }
    }
    console.log(`${rel.padEnd(88)} ${median(times.off).toFixed(0).padStart(5)} ms ${median(times.on).toFixed(0).padStart(5)} ms`);
  }
}

void (async () => {
  await perOp();
  await perFile();
})();
