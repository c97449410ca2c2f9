// The isolated mode (settings.isolation 'interpreter'): ops run in QuickJS compiled to
// WebAssembly in a worker thread, through the real Checker, discovery, esbuild and engine.
// Same verdicts as the runner process on correct and wrong ops; loops and allocation bombs are
// stopped; nothing of Node is reachable; the main thread stays free; results say where they ran.
import assert from 'node:assert/strict';
import { Checker } from '../../server/src/core/checker';
import { DEFAULT_SETTINGS, type CheckSettings } from '../../server/src/engine/settings';
import type { OpResult } from '../../server/src/model/types';
import { HOST_GLOBALS } from './cases';
import { copyHostileWorkspace, type HostileCopy } from './workspace';

const interpreter = (overrides: Partial<CheckSettings> = {}): CheckSettings => ({ ...DEFAULT_SETTINGS, isolation: 'interpreter', ...overrides });

function named(results: OpResult[], forward: string): OpResult {
  const r = results.find((x) => x.forward === forward);
  if (!r) throw new Error(`no result for ${forward}; got ${results.map((x) => x.forward).join(', ')}`);
  return r;
}

function show(results: OpResult[]): string {
  return results.map((r) => `${r.forward}: ${r.verdict} — ${r.message}`).join('\n');
}

describe('isolated mode: ops in a WebAssembly interpreter', function () {
  this.timeout(120_000);
  let ws: HostileCopy;
  let checker: Checker;
  before(() => {
    ws = copyHostileWorkspace();
    checker = new Checker({ settings: DEFAULT_SETTINGS, workers: 1 });
  });
  after(async () => {
    await checker.dispose();
    ws.remove();
  });

  it('gives the same verdicts as the runner process on correct and wrong ops, and says where it ran', async () => {
    const file = ws.file('isolated/parity.ts');
    const inProcess = await checker.checkFile(file, { settings: DEFAULT_SETTINGS });
    const isolated = await checker.checkFile(file, { settings: interpreter() });
    assert.deepEqual(
      isolated.map((r) => [r.forward, r.verdict]),
      inProcess.map((r) => [r.forward, r.verdict]),
      show(isolated),
    );
    assert.deepEqual(
      isolated.map((r) => r.verdict),
      ['pass', 'mismatch', 'pass'],
      show(isolated),
    );
    for (const r of isolated) assert.equal(r.isolation, 'interpreter');
    for (const r of inProcess) assert.equal(r.isolation, undefined);
    // d/dx x^3 = 3x^2 against a backward giving x^2: relative error exactly 2/3 in both (power rule).
    for (const r of [named(isolated, 'paddleDrag'), named(inProcess, 'paddleDrag')]) {
      assert.ok(Math.abs(r.params[0]!.maxRelError - 2 / 3) < 1e-6, `${r.params[0]!.maxRelError}`);
    }
    // The same seeded inputs in both: the worst element is the same one.
    assert.deepEqual(named(isolated, 'paddleDrag').params[0]!.worst?.index, named(inProcess, 'paddleDrag').params[0]!.worst?.index);
  });

  it('stops a forward that never returns with its interrupt, and the next op still runs', async () => {
    const results = await checker.checkFile(ws.file('runaway.ts'), { settings: interpreter({ timeLimitMs: 1500 }) });
    assert.match(named(results, 'openSluiceForever').message, /^timed out after 1500 ms$/, show(results));
    assert.match(named(results, 'countTurns').message, /stack overflow/, show(results));
    assert.equal(named(results, 'liftGate').verdict, 'pass', show(results));
  });

  it('keeps the main thread free while an op spins in the interpreter', async () => {
    let ticks = 0;
    const timer = setInterval(() => ticks++, 50);
    try {
      await checker.checkFile(ws.file('runaway.ts'), { settings: interpreter({ timeLimitMs: 1500 }), filter: 'openSluiceForever' });
    } finally {
      clearInterval(timer);
    }
    // 1.5 s of spinning: a blocked main thread would have ticked once at most.
    assert.ok(ticks >= 10, `the main thread ticked ${ticks} times`);
  });

  it('stops an allocation bomb at its memory limit, and the next op still runs', async () => {
    const hostBefore = process.memoryUsage().rss;
    const results = await checker.checkFile(ws.file('allocation.ts'), { settings: interpreter({ memoryLimitMb: 64, timeLimitMs: 20_000 }) });
    const bomb = named(results, 'recordRipples');
    assert.equal(bomb.verdict, 'error', show(results));
    // Stopped by the interpreter's own limit, or from outside when its WebAssembly memory outgrew it.
    assert.match(bomb.message, /(out of memory|memory in the interpreter grew past|MiB of memory in the interpreter, over the limit of 384 MiB)/, show(results));
    assert.equal(named(results, 'pondLevel').verdict, 'pass', show(results));
    const grownMb = (process.memoryUsage().rss - hostBefore) / 2 ** 20;
    assert.ok(grownMb < 200, `the host grew by ${grownMb.toFixed(0)} MiB`);
  });

  it('reaches nothing of Node: every escape fails on its own op, no file is written', async () => {
    const results = await checker.checkFile(ws.file('escape.ts'), { settings: interpreter() });
    for (const r of results) assert.equal(r.verdict, 'error', show(results));
    assert.match(named(results, 'viaRequire').message, /not a function/);
    assert.match(named(results, 'viaProcess').message, /cannot read property 'mainModule' of undefined/);
    assert.match(named(results, 'viaFetch').message, /'fetch' is not defined/);
    // Code generation works in the interpreter, but there is no `process` to find.
    assert.match(named(results, 'viaConstructorChain').message, /'process' is not defined/);
    assert.match(named(results, 'viaDynamicImport').message, /^the op called import\("node:fs"\).*refused$/);
    const seen = named(results, 'listGlobals')
      .message.replace(/^.*globals: /, '')
      .split(',');
    for (const name of HOST_GLOBALS) assert.ok(!seen.includes(name), `${name} is visible: ${seen.join(',')}`);
    assert.deepEqual(ws.markers(), []);
  });

  it('reports a module that throws or hangs at load once for all its ops', async () => {
    const thrown = await checker.checkFile(ws.file('loadThrows.ts'), { settings: interpreter() });
    for (const r of thrown) assert.match(r.message, /^the module threw while loading: Error: tide table is empty/);
    const hung = await checker.checkFile(ws.file('loadLoops.ts'), { settings: interpreter({ timeLimitMs: 1000 }) });
    for (const r of hung) assert.match(r.message, /^timed out after 1000 ms while loading the module/);
  });
});
