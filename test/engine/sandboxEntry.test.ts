// The in-context entry: the engine bundled by esbuild to an IIFE (as esbuild.mjs does), evaluated
// in a fresh vm context with ES built-ins only, defines __gradientProbeRun; user code that runs
// after it and patches built-ins cannot change the engine's arithmetic.

import assert from 'node:assert/strict';
import * as vm from 'node:vm';
import { buildSync } from 'esbuild';
import { DEFAULT_SETTINGS } from '../../server/src/engine/settings';
import type { CheckOutcome, OpDescriptor } from '../../server/src/model/types';

function engineSource(): string {
  const out = buildSync({
    entryPoints: ['server/src/engine/sandboxEntry.ts'],
    bundle: true,
    platform: 'neutral',
    format: 'iife',
    target: 'es2022',
    write: false,
    logLevel: 'silent',
  });
  return out.outputFiles[0].text;
}

const op: OpDescriptor = {
  file: '/virtual/ops.ts',
  line: 3,
  column: 17,
  endLine: 3,
  endColumn: 25,
  forward: 'softplus',
  backward: 'softplusBackward',
  target: { kind: 'function', forwardName: 'softplus', backwardName: 'softplusBackward', backwardIsMethod: false },
  params: [{ name: 'x', isField: false, sample: { kind: 'random', dtype: 'f64', shape: [32], range: [-4, 4], avoid: [], fixed: false } }],
  backwardArgs: [{ kind: 'param', name: 'x' }, { kind: 'upstream' }],
  fixed: [],
  tags: [],
  problems: [],
};

const userModule = (factor: number) => `
  globalThis.__gradientProbeExposed = {
    softplus: (x) => x.map((v) => Math.log1p(Math.exp(v))),
    softplusBackward: (x, dy) => x.map((v, i) => ${factor} * dy[i] / (1 + Math.exp(-v))),
  };`;

function runInFreshContext(userCode: string, patches = ''): CheckOutcome {
  const context = vm.createContext({}, { codeGeneration: { strings: false, wasm: false } });
  vm.runInContext(engineSource(), context);
  vm.runInContext(userCode, context);
  vm.runInContext(patches, context);
  const json = vm.runInContext(`__gradientProbeRun(globalThis.__gradientProbeExposed, ${JSON.stringify(JSON.stringify({ op, settings: DEFAULT_SETTINGS }))})`, context) as unknown;
  assert.equal(typeof json, 'string');
  return JSON.parse(json as string) as CheckOutcome;
}

describe('engine: sandbox entry in a vm context', () => {
  it('defines __gradientProbeRun, which returns the outcome as JSON', () => {
    const o = runInFreshContext(userModule(1));
    assert.equal(o.verdict, 'pass', JSON.stringify(o));
    assert.equal(o.seed, DEFAULT_SETTINGS.seed);
    const bad = runInFreshContext(userModule(1.001));
    assert.equal(bad.verdict, 'mismatch', JSON.stringify(bad));
  });

  it('user code that patches Math, typed-array and Array prototypes and JSON after loading does not change the verdicts', () => {
    // Patches that would break an engine reading the globals at call time.
    const patches = `
      const realAbs = Math.abs;
      Math.abs = () => 0; Math.max = () => 0; Math.min = () => 0; Math.sqrt = () => 1; Math.cbrt = () => 1;
      Array.prototype.push = function () { throw new Error('patched push'); };
      Array.prototype.sort = function () { return this; };
      Float64Array.prototype.fill = function () { return this; };
      Object.keys = () => [];
      Array.isArray = () => false;
      Number.isFinite = () => true;
      JSON.stringify = () => '{"verdict":"pass"}';
      JSON.parse = () => ({});
      void realAbs;`;
    const good = runInFreshContext(userModule(1), patches);
    assert.equal(good.verdict, 'pass', JSON.stringify(good));
    const bad = runInFreshContext(userModule(1.001), patches);
    assert.equal(bad.verdict, 'mismatch', JSON.stringify(bad));
  });

  it('a request that is not JSON is an error outcome, not an exception', () => {
    const context = vm.createContext({});
    vm.runInContext(engineSource(), context);
    const json = vm.runInContext('__gradientProbeRun({}, "{not json")', context) as string;
    const o = JSON.parse(json) as CheckOutcome;
    assert.equal(o.verdict, 'error');
    assert.match(o.message, /not valid JSON/);
  });
});
