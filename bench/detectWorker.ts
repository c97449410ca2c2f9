// Detection power at scale, in its own process: one op at one size with a seeded bug in its
// backward (a few elements of one gradient scaled by 1 + r, placed anew by every seed), checked
// with the default settings through the Checker for consecutive seeds. Prints one JSON line
// (DetectionMeasurement) on stdout.
// Usage: node dist/bench/detectWorker.js KIND ELEMENTS BUG_COUNT BUG_RELATIVE TRIALS FIRST_SEED [BUG_PARAM]
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Checker } from '../server/src/core/checker';
import { DEFAULT_SETTINGS } from '../server/src/engine/settings';
import { seededRandom } from './directOp';
import { median } from './floor';
import { benchOp, type OpKind } from './opSources';
import type { DetectionMeasurement } from './results';
import { clopperPearsonLower } from './stats';

/**
 * Where the seeded bug sits for a seed: the runner seeds Math.random with mulberry32 from
 * (seed >>> 0) ^ 0x9e3779b9 (server/src/sandbox/contextSetup.ts), and the op's module draws
 * the positions first thing at load.
 */
export function bugPositions(seed: number, size: number, count: number): number[] {
  const random = seededRandom(((seed >>> 0) ^ 0x9e3779b9) >>> 0);
  const at: number[] = [];
  while (at.length < count) {
    const i = Math.floor(random() * size);
    if (!at.includes(i)) at.push(i);
  }
  return at;
}

function flatIndex(index: number[], shape: number[]): number {
  let f = 0;
  for (let d = 0; d < shape.length; d++) f = f * shape[d] + (index[d] ?? 0);
  return f;
}

async function main(): Promise<void> {
  const [kind, elementsText, countText, relText, trialsText, seedText, bugParam] = process.argv.slice(2);
  const bug = { count: Number(countText), relative: Number(relText), ...(bugParam ? { param: bugParam } : {}) };
  const op = benchOp(kind as OpKind, Number(elementsText), bug);
  const trials = Number(trialsText);
  const firstSeed = Number(seedText);
  const bugSize = op.params.find((p) => p.name === op.bugParam)?.elements ?? 0;
  const dir = mkdtempSync(join(tmpdir(), 'gradient-probe-detect-'));
  const file = join(dir, op.fileName);
  writeFileSync(file, op.text);
  const checker = new Checker({ settings: DEFAULT_SETTINGS, workers: 1 });
  try {
    await checker.checkFile(file, { settings: { ...DEFAULT_SETTINGS, seed: firstSeed - 1 } }); // warm-up, not counted
    let caught = 0;
    let located = 0;
    const missed: Record<string, number> = {};
    const missedSeeds: { seed: number; verdict: string; note?: string }[] = [];
    const times: number[] = [];
    const methods = new Set<string>();
    for (let t = 0; t < trials; t++) {
      const seed = firstSeed + t;
      const started = performance.now();
      const result = (await checker.checkFile(file, { settings: { ...DEFAULT_SETTINGS, seed } }))[0];
      times.push(performance.now() - started);
      if (!result) throw new Error('no op found');
      for (const p of result.params) methods.add(`${p.name}:${p.method}`);
      if (result.verdict === 'mismatch') {
        caught++;
        const p = result.params.find((q) => q.name === op.bugParam);
        const at = bugPositions(seed, bugSize, bug.count);
        if (p?.worst && at.includes(flatIndex(p.worst.index, p.shape))) located++;
        else missedSeeds.push({ seed, verdict: 'mismatch, not located' });
      } else {
        missed[result.verdict] = (missed[result.verdict] ?? 0) + 1;
        missedSeeds.push({ seed, verdict: result.verdict, ...(result.message ? { note: result.message } : {}) });
      }
    }
    const m: DetectionMeasurement = {
      kind: op.kind,
      forward: op.forward,
      elements: op.elements,
      bugParam: op.bugParam,
      bugCount: bug.count,
      bugRelative: bug.relative,
      trials,
      firstSeed,
      caught,
      located,
      missed,
      missedSeeds,
      lowerBound95: clopperPearsonLower(caught, trials, 0.05),
      medianMs: median(times),
      maxMs: Math.max(...times),
      methods: [...methods],
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
