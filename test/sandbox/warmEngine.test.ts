// The runner's warm engine (sandbox/child.ts): small ops run on an engine loaded once into a
// context of its own, each op's module in a fresh context; what the op receives is of its own
// context, and the engine's context is frozen once the engine has loaded.
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import * as vm from 'node:vm';
import { Checker } from '../../server/src/core/checker';
import { ENGINE_SCRIPT_NAME, findBuiltAsset } from '../../server/src/sandbox/assets';
import { CONTEXT_SETUP_SOURCE, FIXED_DATE_MS } from '../../server/src/sandbox/contextSetup';
import { wrapWithBuiltins } from '../../server/src/sandbox/bundleWrapper';
import type { OpResult } from '../../server/src/model/types';
import { describeResults, fixture, resultOf, settingsWith } from './helpers';

describe('sandbox: the warm engine', function () {
  this.timeout(60_000);
  let results: OpResult[];

  before(async () => {
    const checker = new Checker({ settings: settingsWith({}) });
    try {
      // Twice in one runner, so the second round runs on an engine that already checked ops.
      await checker.checkFile(fixture('realm.ts'));
      results = await checker.checkFile(fixture('realm.ts'));
    } finally {
      await checker.dispose();
    }
  });

  it('hands a small op typed arrays, nested arrays and records of its own context, from an engine outside it', () => {
    assert.equal(resultOf(results, 'smallTyped').verdict, 'pass', describeResults(results));
    assert.equal(resultOf(results, 'smallNested').verdict, 'pass', describeResults(results));
  });

  it('loads the engine into the context of an op too large for the warm engine', () => {
    assert.equal(resultOf(results, 'largeTyped').verdict, 'pass', describeResults(results));
  });

  it('freezes every intrinsic of the engine context once the engine has loaded', () => {
    const engine = findBuiltAsset(ENGINE_SCRIPT_NAME);
    assert.ok(engine, 'run the build first');
    const context = vm.createContext(Object.create(null), { codeGeneration: { strings: false, wasm: false }, microtaskMode: 'afterEvaluate' });
    const setup = new vm.Script(CONTEXT_SETUP_SOURCE).runInContext(context) as (seed: number, now: number, limit: number, engineContext: boolean) => unknown;
    setup(0, FIXED_DATE_MS, 0, true);
    (context as Record<string, unknown>).__gradientProbeEngine = new vm.Script(wrapWithBuiltins(readFileSync(engine, 'utf8'))).runInContext(context);
    const run: unknown = vm.runInContext('__gradientProbeLoadEngine()', context);
    assert.equal(typeof run, 'function');
    const frozen = vm.runInContext(
      `[
      Object.prototype, Array.prototype, Function.prototype, Object, Array, Math, JSON, Reflect,
      Float64Array.prototype, Object.getPrototypeOf(Float64Array.prototype), Error.prototype, Promise.prototype,
      Object.getPrototypeOf([][Symbol.iterator]()), Object.getPrototypeOf(Object.getPrototypeOf([][Symbol.iterator]())),
      Object.getPrototypeOf(function* () {}), Object.getPrototypeOf(async function () {}),
    ].map((v) => Object.isFrozen(v))`,
      context,
    ) as boolean[];
    assert.deepEqual([...frozen], Array(frozen.length).fill(true));
    // Adding to a frozen prototype fails, so no op can leave anything there for the next one.
    assert.throws(() => vm.runInContext(`'use strict'; Object.prototype.mark = 1;`, context), /not extensible|read only|Cannot add property/);
  });
});
