// Benchmark (prints figures; not a test) of the nested-array case (listed in DEVELOPERS.md): one 500×500 op
// checked through the real Checker and runner, as nested `number[][]` in map style and in
// push-loop style, against the same op on a Float64Array. Minimum of RUNS checks each.
// Run: npx esbuild bench/nestedArrays.ts --bundle --platform=node --packages=external \
//        --outfile=dist/bench/nestedArrays.js && node dist/bench/nestedArrays.js   (after npm run build)
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Checker } from '../server/src/core/checker';
import { DEFAULT_SETTINGS } from '../server/src/engine/settings';

const RUNS = 5;
const N = 500;

const SOURCE = `
/**
 * @backward mapStyleBackward
 * @sample m num[${N}, ${N}]
 */
export function mapStyle(m: number[][]): number[][] {
  return m.map((row) => row.map((v) => Math.sin(v)));
}
export function mapStyleBackward(m: number[][], dy: number[][]): number[][] {
  return m.map((row, r) => row.map((v, c) => Math.cos(v) * dy[r][c]));
}
/**
 * @backward pushStyleBackward
 * @sample m num[${N}, ${N}]
 */
export function pushStyle(m: number[][]): number[][] {
  const out: number[][] = [];
  for (let r = 0; r < m.length; r++) { const row: number[] = []; for (let c = 0; c < m[r].length; c++) row.push(Math.sin(m[r][c])); out.push(row); }
  return out;
}
export function pushStyleBackward(m: number[][], dy: number[][]): number[][] {
  const out: number[][] = [];
  for (let r = 0; r < m.length; r++) { const row: number[] = []; for (let c = 0; c < m[r].length; c++) row.push(Math.cos(m[r][c]) * dy[r][c]); out.push(row); }
  return out;
}
/**
 * @backward typedBackward
 * @sample m f64[${N}, ${N}]
 */
export function typed(m: Float64Array): Float64Array {
  return m.map((v) => Math.sin(v));
}
export function typedBackward(m: Float64Array, dy: Float64Array): Float64Array {
  return m.map((v, i) => Math.cos(v) * dy[i]);
}
`;

async function main(): Promise<void> {
  const dir = mkdtempSync(join(tmpdir(), 'gp-bench-nested-'));
  const file = join(dir, 'ops.ts');
  writeFileSync(file, SOURCE);
  const checker = new Checker({ settings: DEFAULT_SETTINGS, workers: 1 });
  try {
    const best: Record<string, number> = {};
    for (let run = 0; run < RUNS; run++) {
      for (const name of ['typed', 'mapStyle', 'pushStyle']) {
        const [r] = await checker.checkFile(file, { filter: name });
        if (!r || r.verdict !== 'pass') throw new Error(`${name}: ${r?.verdict} ${r?.message}`);
        best[name] = Math.min(best[name] ?? Infinity, r.elapsedMs);
      }
    }
    console.log(`${N}×${N} op, minimum of ${RUNS} checks in a runner:`);
    for (const name of ['typed', 'mapStyle', 'pushStyle']) {
      console.log(`  ${name.padEnd(10)} ${best[name]!.toFixed(0).padStart(6)} ms  (${(best[name]! / best['typed']!).toFixed(2)}× typed)`);
    }
  } finally {
    await checker.dispose();
    rmSync(dir, { recursive: true, force: true });
  }
}

void main();
