// What every op of the hostile workspace (test/fixtures/hostile) must end as, with the limits
// its gradient-probe.json sets (timeLimitMs 3000, memoryLimitMb 256): the verdict, a message
// that says what happened, and where it points. The CLI and the language server suites both
// check the workspace against this one table.
import type { Verdict } from '../../server/src/model/types';

export interface HostileCase {
  /** The case in words (as test/fixtures/hostile/README.md lists it). */
  what: string;
  file: string;
  forward: string;
  verdict: Verdict;
  message: RegExp;
  /**
   * Text on the line the first problem must point at (annotation mistakes, syntax errors,
   * unresolved imports); absent when the op's own line is the place.
   */
  problemAt?: string;
}

/** The per-op time limit of the workspace's gradient-probe.json, in milliseconds. */
export const WORKSPACE_TIME_LIMIT_MS = 3000;

const annotation = (forward: string, problemAt: string, message: RegExp): HostileCase => ({
  what: `annotation mistake: ${forward}`,
  file: 'annotations.ts',
  forward,
  verdict: 'error',
  message,
  problemAt,
});

export const HOSTILE_CASES: readonly HostileCase[] = [
  { what: 'forward that never returns', file: 'runaway.ts', forward: 'openSluiceForever', verdict: 'error', message: /^timed out after 3000 ms/ },
  {
    what: 'forward blocked on Atomics.wait',
    file: 'runaway.ts',
    forward: 'waitForTide',
    verdict: 'error',
    message: /^forward threw at the sample point: ReferenceError: SharedArrayBuffer is not defined$/,
  },
  {
    what: 'unbounded recursion',
    file: 'runaway.ts',
    forward: 'countTurns',
    verdict: 'error',
    message: /^forward threw at the sample point: RangeError: Maximum call stack size exceeded$/,
  },
  { what: 'correct op beside runaway ones', file: 'runaway.ts', forward: 'liftGate', verdict: 'pass', message: /^$/ },
  {
    what: 'allocation without end',
    file: 'allocation.ts',
    forward: 'recordRipples',
    verdict: 'error',
    message: /(runner process died .*out of memory.*256 MiB memory limit|used \d+ MiB of memory, over the limit of \d+ MiB \(memory limit 256 MiB)/,
  },
  { what: 'correct op beside an allocation bomb', file: 'allocation.ts', forward: 'pondLevel', verdict: 'pass', message: /^$/ },
  {
    what: 'throw of a plain object',
    file: 'throwing.ts',
    forward: 'jamWheel',
    verdict: 'error',
    message: /^forward threw at the sample point: \{"code":"WHEEL_JAMMED","paddle":7\} \(a thrown object, not an Error\)$/,
  },
  { what: 'throw of null', file: 'throwing.ts', forward: 'dropWheel', verdict: 'error', message: /^forward threw at the sample point: null \(a thrown null, not an Error\)$/ },
  {
    what: 'throw of a string',
    file: 'throwing.ts',
    forward: 'crackWheel',
    verdict: 'error',
    message: /^forward threw at the sample point: "millstone cracked" \(a thrown string, not an Error\)$/,
  },
  {
    what: 'backward returning undefined',
    file: 'badBackward.ts',
    forward: 'weirFlow',
    verdict: 'error',
    message: /^backward: gradient of 'x' is undefined, expected shape \[3\]$/,
  },
  { what: 'backward returning a string', file: 'badBackward.ts', forward: 'head', verdict: 'error', message: /^backward: gradient of 'x' is a string, expected shape \[3\]$/ },
  {
    what: 'backward declared async',
    file: 'badBackward.ts',
    forward: 'tailrace',
    verdict: 'error',
    message: /backward 'tailraceBackward' is async: it must return its result directly/,
    problemAt: '@backward tailraceBackward',
  },
  {
    what: 'backward returning a Promise',
    file: 'badBackward.ts',
    forward: 'spillway',
    verdict: 'error',
    message: /^backward: gradient of 'x' is a Promise \(checks need the value itself, not a promise of it\), expected shape \[3\]$/,
  },
  {
    what: 'async forward',
    file: 'badBackward.ts',
    forward: 'paddleAsync',
    verdict: 'error',
    message: /paddleAsync is async: checks call the forward synchronously/,
    problemAt: 'export async function paddleAsync',
  },
  {
    what: 'forward returning a Promise',
    file: 'badBackward.ts',
    forward: 'paddleLater',
    verdict: 'error',
    message: /^forward output is a Promise \(checks need the value itself, not a promise of it\)/,
  },
  {
    what: 'module top level that loops',
    file: 'loadLoops.ts',
    forward: 'stillWater',
    verdict: 'error',
    message: /^timed out after 3000 ms while loading the module \(its top-level code did not finish\)$/,
  },
  {
    what: 'module top level that loops (second op, not run again)',
    file: 'loadLoops.ts',
    forward: 'stillPond',
    verdict: 'error',
    message: /^timed out after 3000 ms while loading the module/,
  },
  {
    what: 'module top level that throws',
    file: 'loadThrows.ts',
    forward: 'highTide',
    verdict: 'error',
    message: /^the module threw while loading: Error: tide table is empty \(line 4\)$/,
    problemAt: "throw new Error('tide table is empty')",
  },
  {
    what: 'module top level that throws (second op)',
    file: 'loadThrows.ts',
    forward: 'lowTide',
    verdict: 'error',
    message: /^the module threw while loading: Error: tide table is empty \(line 4\)$/,
    problemAt: "throw new Error('tide table is empty')",
  },
  { what: 'op that writes globals and prototypes', file: 'leakWriter.ts', forward: 'wheelTorque', verdict: 'pass', message: /^$/ },
  { what: 'globalThis write must not reach another op', file: 'leakWriter.ts', forward: 'sluiceRatio', verdict: 'pass', message: /^$/ },
  { what: 'prototype and global changes must not reach the next file', file: 'leakReader.ts', forward: 'millrace', verdict: 'pass', message: /^$/ },
  { what: 'reach require', file: 'escape.ts', forward: 'viaRequire', verdict: 'error', message: /^forward threw at the sample point: TypeError: load is not a function$/ },
  {
    what: 'reach process',
    file: 'escape.ts',
    forward: 'viaProcess',
    verdict: 'error',
    message: /^forward threw at the sample point: TypeError: Cannot read properties of undefined \(reading 'mainModule'\)$/,
  },
  {
    what: 'reach the environment',
    file: 'escape.ts',
    forward: 'viaEnvironment',
    verdict: 'error',
    message: /^forward threw at the sample point: TypeError: Cannot read properties of undefined \(reading 'env'\)$/,
  },
  { what: 'reach fetch', file: 'escape.ts', forward: 'viaFetch', verdict: 'error', message: /^forward threw at the sample point: ReferenceError: fetch is not defined$/ },
  {
    what: 'call process.exit',
    file: 'escape.ts',
    forward: 'viaExit',
    verdict: 'error',
    message: /^forward threw at the sample point: TypeError: Cannot read properties of undefined \(reading 'exit'\)$/,
  },
  {
    what: 'constructor chain of globalThis to the host',
    file: 'escape.ts',
    forward: 'viaConstructorChain',
    verdict: 'error',
    message: /^forward threw at the sample point: EvalError: Code generation from strings disallowed for this context$/,
  },
  {
    what: 'constructor chain of an input to the host',
    file: 'escape.ts',
    forward: 'viaInputConstructor',
    verdict: 'error',
    message: /^forward threw at the sample point: EvalError: Code generation from strings disallowed for this context$/,
  },
  {
    what: 'host objects through stack frames',
    file: 'escape.ts',
    forward: 'viaStackFrames',
    verdict: 'error',
    message: /^forward threw at the sample point: TypeError: Cannot read properties of undefined \(reading 'process'\)$/,
  },
  {
    what: 'dynamic import() and its refusal',
    file: 'escape.ts',
    forward: 'viaDynamicImport',
    verdict: 'error',
    message: /^the op called import\("node:fs"\), which code checked in the sandbox cannot use; the import was refused$/,
  },
  { what: 'what an op can see', file: 'escape.ts', forward: 'listGlobals', verdict: 'error', message: /^forward threw at the sample point: globals: / },
  {
    what: 'syntax error',
    file: 'syntaxError.ts',
    forward: 'wheelSpeed',
    verdict: 'error',
    message: /^the file has a syntax error, so none of its ops can run: Expression expected\./,
    problemAt: 'return g +;',
  },
  {
    what: 'import of a missing module',
    file: 'missingImport.ts',
    forward: 'paddleLoad',
    verdict: 'error',
    message: /^the module could not be bundled: cannot import "\.\/millTables": no such file or package \(line 2\)$/,
    problemAt: "from './millTables'",
  },
  {
    what: 'broken import cycle',
    file: 'cycleBrokenA.ts',
    forward: 'geared',
    verdict: 'error',
    message: /^the module threw while loading: TypeError: Cannot read properties of undefined \(reading 'ratio'\) \(line 8\)$/,
    problemAt: 'return gearing.ratio;',
  },
  { what: 'legal import cycle', file: 'cycleLegalA.ts', forward: 'shaftPower', verdict: 'pass', message: /^$/ },
  { what: 'huge output', file: 'outputs.ts', forward: 'pondSurface', verdict: 'error', message: /^forward output has 5000000 elements, more than the limit of 4000000$/ },
  { what: 'NaN at one index', file: 'outputs.ts', forward: 'paddleFlow', verdict: 'error', message: /^forward output has NaN at index \[2\] at the sample point$/ },
  { what: "doc comment ending in 'word-*/' (a TypeScript parser trap)", file: 'parserTrap.ts', forward: 'gateHead', verdict: 'pass', message: /^$/ },
  { what: 'op that prints with console', file: 'chatty.ts', forward: 'grind', verdict: 'pass', message: /^$/ },
  {
    what: 'non-deterministic forward',
    file: 'nondeterministic.ts',
    forward: 'stoneWear',
    verdict: 'inconclusive',
    message: /^forward is not deterministic: two calls at the same input differ at index \[0\]/,
  },
  annotation('misspeltTag', '@sampel x num', /^annotation problem: unknown tag @sampel; did you mean @sample\?/),
  annotation('noBackward', '@sample x num', /has sampling tags but no @backward/),
  annotation('emptyBackward', ' * @backward\n', /@backward needs the name of the backward function/),
  annotation('unknownBackward', '@backward gateBackwrd', /backward 'gateBackwrd' not found: .*did you mean 'gateBackward'\?/),
  annotation('unsampledParam', 'export function unsampledParam', /parameter 'x' has no @sample/),
  annotation('sampleForNothing', '@sample depth num', /'depth' is not a parameter of sampleForNothing/),
  annotation('badDtype', '@sample x f65[3]', /unknown element type 'f65'; did you mean 'f64'\?/),
  annotation('badLiteral', '@sample x = {"level": }', /@sample x: invalid JSON value/),
  annotation('fixedWithoutSamples', '@fixed x', /@fixed goes with @samples/),
  annotation('missingFactory', '@samples tideInputs', /@samples factory 'tideInputs' is not declared/),
  annotation('unknownPlaceholder', '@backward gateBackward(x, $z)', /unknown placeholder '\$z'/),
  annotation('constructOnFunction', '@construct twoInputs', /@construct only applies to methods/),
  annotation('badTolerance', '@tolerance tight', /@tolerance: expected a positive relative tolerance.*found 'tight'/),
  annotation('badSeed', '@seed -3', /@seed: expected an integer from 0 to 4294967295.*found '-3'/),
  annotation('repeatedSeed', '@seed 2', /@seed is given twice/),
  annotation('restParams', 'export function restParams', /a rest parameter \(found '\.\.\.more: number\[\]'\) cannot be sampled/),
  annotation('noUpstream', '@backward gateBackward(x)', /the list has no \$dy, but noUpstream returns 'Float64Array'/),
  annotation('asyncForward', 'export async function asyncForward', /asyncForward is async/),
  annotation('Sluice.staticForward', 'static staticForward', /'staticForward' is static/),
];

/** Names of the host that must not appear among an op's globals. */
export const HOST_GLOBALS = [
  'process',
  'require',
  'module',
  'exports',
  '__dirname',
  '__filename',
  'Buffer',
  'global',
  'fetch',
  'setTimeout',
  'setInterval',
  'setImmediate',
  'queueMicrotask',
  'structuredClone',
  'WebAssembly',
  'SharedArrayBuffer',
  'Atomics',
  'XMLHttpRequest',
  'WebSocket',
  'Worker',
  'importScripts',
  'Deno',
  'Bun',
];

/** The line a case must point at: its problem's line, else the line of its forward's name. */
export function expectedLine(c: HostileCase, text: string): number {
  const lines = text.split('\n');
  if (c.problemAt !== undefined) {
    const needle = c.problemAt.replace(/\n$/, '');
    const exact = c.problemAt.endsWith('\n');
    const i = lines.findIndex((l) => (exact ? l.trimEnd().endsWith(needle.trim()) && l.includes(needle) : l.includes(needle)));
    if (i < 0) throw new Error(`${c.file}: "${c.problemAt}" not found`);
    return i + 1;
  }
  const name = c.forward.includes('.') ? c.forward.split('.')[1]! : c.forward;
  const i = lines.findIndex((l) => new RegExp(`(function|const|static)\\s+${name}\\b`).test(l));
  if (i < 0) throw new Error(`${c.file}: the forward ${c.forward} not found`);
  return i + 1;
}
