// Benchmark: how long discovery takes on a generated 2,000-line TypeScript file (the language
// server runs it on every save). Prints figures; asserts nothing about time.
// Run: npx esbuild bench/discovery.ts --bundle --platform=node --packages=external --outfile=/tmp/bench-discovery.js && node /tmp/bench-discovery.js
import ts from 'typescript';
import { discoverOps } from '../server/src/discovery/index';

/** Lines of the generated file; the figure the task asks for. */
const TARGET_LINES = 2000;
/** Timed repetitions after warm-up; the median is reported. */
const RUNS = 30;
const WARMUP = 5;

/** A file of a fictional irrigation planner: annotated ops (functions, consts, methods) and plain code. */
function generateFile(lines: number): { text: string; annotated: number } {
  const parts: string[] = ["import { clamp } from './util';", ''];
  let annotated = 0;
  let k = 0;
  while (parts.join('\n').split('\n').length < lines) {
    const i = k++;
    switch (i % 4) {
      case 0:
        parts.push(
          '/**',
          ` * Soil moisture response ${i}.`,
          ` * @backward moisture${i}Backward`,
          ' * @sample w f64[16] in [-2, 2] avoid 0',
          ' * @sample rate num in [0.1, 5]',
          ' * @sample opts = {"decay": 0.5, "axis": [1, 2]}',
          ' * @param w weights',
          ' */',
          `export function moisture${i}(w: Float64Array, rate: number, opts: object): Float64Array {`,
          '  const out = new Float64Array(w.length);',
          '  for (let j = 0; j < w.length; j++) out[j] = Math.tanh(rate * w[j]!);',
          '  return out;',
          '}',
          `export function moisture${i}Backward(w: Float64Array, rate: number, opts: object, dy: Float64Array) {`,
          '  return [dy, 0];',
          '}',
          '',
        );
        annotated++;
        break;
      case 1:
        parts.push(
          '/**',
          ` * @backward flow${i}Backward(x, $y, $dy)`,
          ' * @sample x f32[4, 4]',
          ' * @tolerance 1e-5',
          ' * @seed 17',
          ' */',
          `export const flow${i} = (x: Float32Array): Float32Array => x.map((v) => v * v);`,
          `const flow${i}Backward = (x: Float32Array, y: Float32Array, dy: Float32Array) => dy.map((d, j) => 2 * x[j]! * d);`,
          '',
        );
        annotated++;
        break;
      case 2:
        parts.push(
          `export class Valve${i} {`,
          '  gain = new Float64Array(3);',
          '  /**',
          '   * @backward openBackward',
          '   * @sample this.gain f64[3]',
          '   * @sample x num[3]',
          '   */',
          '  open(x: number[]): number {',
          '    let s = 0;',
          '    for (let j = 0; j < 3; j++) s += this.gain[j]! * x[j]!;',
          '    return s;',
          '  }',
          '  openBackward(dy: number) { return { x: Array.from(this.gain, (g) => g * dy), gain: [dy, dy, dy] }; }',
          '}',
          '',
        );
        annotated++;
        break;
      default:
        parts.push(
          '/** A helper without tags. */',
          `function schedule${i}(days: number[]): number {`,
          '  let total = 0;',
          '  for (const d of days) {',
          '    if (d > 3) total += clamp(d, 0, 10);',
          '    else total -= d / 2;',
          '  }',
          '  return total;',
          '}',
          '',
        );
    }
  }
  return { text: parts.join('\n'), annotated };
}

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)]!;
}

function time(fn: () => void): number {
  const t0 = process.hrtime.bigint();
  fn();
  return Number(process.hrtime.bigint() - t0) / 1e6;
}

const { text, annotated } = generateFile(TARGET_LINES);
const lineCount = text.split('\n').length;
const first = time(() => discoverOps('/bench/irrigation.ts', text));
const result = discoverOps('/bench/irrigation.ts', text);
const problemCount = result.ops.reduce((n, o) => n + o.problems.length, 0) + result.fileProblems.length;
for (let i = 0; i < WARMUP; i++) discoverOps('/bench/irrigation.ts', text);
const discoverMs: number[] = [];
const parseMs: number[] = [];
for (let i = 0; i < RUNS; i++) {
  discoverMs.push(time(() => discoverOps('/bench/irrigation.ts', text)));
  parseMs.push(time(() => ts.createSourceFile('/bench/irrigation.ts', text, ts.ScriptTarget.Latest, true)));
}
console.log(`file: ${lineCount} lines, ${text.length} characters, ${annotated} annotated ops; found ${result.ops.length} ops, ${problemCount} problems`);
console.log(`discoverOps first call (cold): ${first.toFixed(1)} ms`);
console.log(`discoverOps warm, median of ${RUNS}: ${median(discoverMs).toFixed(2)} ms (min ${Math.min(...discoverMs).toFixed(2)}, max ${Math.max(...discoverMs).toFixed(2)})`);
console.log(`of which the TypeScript parse alone, median: ${median(parseMs).toFixed(2)} ms`);
console.log(`node ${process.version}, typescript ${ts.version}`);
