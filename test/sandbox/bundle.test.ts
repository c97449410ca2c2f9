// The bundler with the real esbuild: relative and package imports from the user's
// node_modules, unsaved text, non-exported bindings, missing imports named with their line,
// and a cache that is hit only while every input is unchanged.
import assert from 'node:assert/strict';
import { cpSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, sep } from 'node:path';
import * as vm from 'node:vm';
import { Checker } from '../../server/src/core/checker';
import { Bundler } from '../../server/src/sandbox/bundle';
import { exposeCode } from '../../server/src/sandbox/exposeCode';
import { describeResults, fixture, resultOf, settingsWith } from './helpers';

/** Evaluates a bundle in a bare context and returns what it exposed (test-only, trusted code). */
function exposedBy(code: string): Record<string, unknown> {
  const context = vm.createContext({});
  vm.runInContext(code, context);
  return vm.runInContext('globalThis.__gradientProbeExposed', context) as Record<string, unknown>;
}

describe('bundle: imports', function () {
  this.timeout(60_000);

  it('resolves a relative import and a package from the file\'s node_modules, preferring "module"', async () => {
    const bundler = new Bundler();
    const file = fixture('withdeps', 'ops.ts');
    const r = await bundler.bundle({ file, text: readFileSync(file, 'utf8'), bindings: ['scaledGain', 'scaledGainBackward'] });
    assert.ok(r.ok, r.ok ? '' : r.message);
    const exposed = exposedBy(r.code);
    // scaledGainBackward is not exported: it must still be reachable.
    assert.equal(typeof exposed.scaledGain, 'function');
    assert.equal(typeof exposed.scaledGainBackward, 'function');
    const y = (exposed.scaledGain as (x: Float64Array) => Float64Array)(new Float64Array([2]));
    // 0.5 (the package's "module" entry) × 1.5 (the relative import) × 2; "main" would give 0.75.
    assert.equal(y[0], 1.5);
  });

  it('and the op passes through the whole Checker', async () => {
    const checker = new Checker({ settings: settingsWith({}) });
    try {
      const results = await checker.checkFile(fixture('withdeps', 'ops.ts'));
      assert.equal(resultOf(results, 'scaledGain').verdict, 'pass', describeResults(results));
    } finally {
      await checker.dispose();
    }
  });

  it('bundles the given text, not the file on disk (an unsaved buffer)', async () => {
    const bundler = new Bundler();
    const file = fixture('withdeps', 'ops.ts');
    const text = readFileSync(file, 'utf8').replace('PANEL_SCALE * v', 'PANEL_SCALE * v * 10');
    const r = await bundler.bundle({ file, text, bindings: ['scaledGain'] });
    assert.ok(r.ok, r.ok ? '' : r.message);
    const y = (exposedBy(r.code).scaledGain as (x: Float64Array) => Float64Array)(new Float64Array([2]));
    assert.equal(y[0], 15);
  });

  it('bundles a file that does not exist on disk yet (a new, unsaved buffer)', async () => {
    const bundler = new Bundler();
    const file = fixture('withdeps', 'not-saved-yet.ts');
    const text = "import { PANEL_SCALE } from './lib/scale';\nexport const scaled = (v: number) => PANEL_SCALE * v;\n";
    const r = await bundler.bundle({ file, text, bindings: ['scaled'] });
    assert.ok(r.ok, r.ok ? '' : r.message);
    assert.equal((exposedBy(r.code).scaled as (v: number) => number)(2), 3);
  });

  it('gives a package that imports a Node built-in an empty module in its place', async () => {
    const bundler = new Bundler();
    const file = fixture('withdeps', 'ops.ts');
    const text = "import { describeReading } from 'fixture-node-aware';\nexport const label = describeReading;\n";
    const r = await bundler.bundle({ file, text, bindings: ['label'] });
    assert.ok(r.ok, r.ok ? '' : r.message);
    assert.equal((exposedBy(r.code).label as (v: number) => string)(4), '4 kW');
  });

  it('a missing import is an error naming the import and its line', async () => {
    const bundler = new Bundler();
    const file = fixture('withdeps', 'ops.ts');
    const text = readFileSync(file, 'utf8').replace("'./lib/scale'", "'./lib/no-such-helper'");
    const r = await bundler.bundle({ file, text, bindings: ['scaledGain'] });
    assert.equal(r.ok, false);
    if (r.ok) return;
    assert.match(r.message, /cannot import "\.\/lib\/no-such-helper"/);
    assert.match(r.message, /line 4/);
    assert.deepEqual(r.location, { file, line: 4, column: 29 });
  });

  it('an import of a Node built-in bundles; calling it says why it cannot work (docs/code-shapes.md, "Imports")', async () => {
    const bundler = new Bundler();
    const file = fixture('withdeps', 'ops.ts');
    const text = `import { readFileSync } from 'node:fs';\nimport { sep } from 'node:path';\nexport const f = () => readFileSync('x');\nexport const g = () => sep;\n`;
    const r = await bundler.bundle({ file, text, bindings: ['f', 'g'] });
    assert.ok(r.ok, r.ok ? '' : r.message);
    const exposed = exposedBy(r.code);
    assert.throws(
      () => (exposed.f as () => unknown)(),
      /node:fs's readFileSync\(\) is not available to code checked in the sandbox: "node:fs" is a Node built-in module \(imported in ops\.ts\)/,
    );
    assert.equal((exposed.g as () => unknown)(), sep, 'path.sep is passed through');
  });

  it('through the Checker, a missing import makes every op of the file an error naming it', async () => {
    const checker = new Checker({ settings: settingsWith({}) });
    try {
      const file = fixture('hostile', 'loop.ts');
      const text = `import { derate } from './no-such-derating';\n${readFileSync(file, 'utf8').replace('x[i] ** 3', 'derate(x[i]) ** 3')}`;
      const results = await checker.checkFile(file, { text });
      assert.equal(results.length, 2, describeResults(results));
      for (const r of results) {
        assert.equal(r.verdict, 'error');
        assert.match(r.message, /cannot import "\.\/no-such-derating"/);
        assert.equal(r.problems?.[0]?.line, 1);
      }
      assert.equal(checker.stats.pool.jobsStarted, 0, 'nothing ran');
    } finally {
      await checker.dispose();
    }
  });

  it('a syntax error makes every op an error with the position', async () => {
    const checker = new Checker({ settings: settingsWith({}) });
    try {
      const file = fixture('hostile', 'loop.ts');
      const text = readFileSync(file, 'utf8').replace('y[i] = x[i] ** 3;', 'y[i] = x[i] ** ;');
      const results = await checker.checkFile(file, { text });
      assert.equal(results.length, 2);
      for (const r of results) {
        assert.equal(r.verdict, 'error');
        assert.match(r.message, /syntax error/);
        assert.ok(
          r.problems?.some((p) => p.line === 23),
          JSON.stringify(r.problems),
        );
      }
    } finally {
      await checker.dispose();
    }
  });
});

describe('bundle: source map', function () {
  this.timeout(60_000);

  it('maps positions in the bundle back to the entry and to an imported file', async () => {
    const bundler = new Bundler();
    const file = fixture('withdeps', 'ops.ts');
    const text = readFileSync(file, 'utf8');
    const r = await bundler.bundle({ file, text, bindings: ['scaledGain', 'scaledGainBackward'] });
    assert.ok(r.ok, r.ok ? '' : r.message);
    const lines = r.code.split('\n');
    // esbuild's own source map is the reference: find a token in the output, map it back, and
    // compare with where the same token stands in the source.
    const cases = [
      { token: 'PANEL_SCALE * v', file, source: text },
      { token: 'PANEL_SCALE = 1.5', file: fixture('withdeps', 'lib', 'scale.ts'), source: readFileSync(fixture('withdeps', 'lib', 'scale.ts'), 'utf8') },
    ];
    for (const c of cases) {
      const genLine = lines.findIndex((l) => l.includes(c.token));
      assert.ok(genLine >= 0, `${c.token} is in the bundle`);
      const place = r.originalPlace(genLine + 1, lines[genLine].indexOf(c.token));
      const srcLine = c.source.split('\n').findIndex((l) => l.includes(c.token)) + 1;
      assert.equal(place?.file, c.file);
      assert.equal(place?.line, srcLine, `${c.token}: ${JSON.stringify(place)}`);
    }
    assert.equal(r.originalPlace(lines.length + 10, 0), undefined);
  });
});

describe('bundle: cache', function () {
  this.timeout(60_000);
  let work: string;
  before(() => {
    work = mkdtempSync(join(tmpdir(), 'gp-bundle-'));
    cpSync(fixture('withdeps'), work, { recursive: true });
  });
  after(() => rmSync(work, { recursive: true, force: true }));

  it('is hit for the same text and inputs, and missed after an import changes', async () => {
    const bundler = new Bundler();
    const file = join(work, 'ops.ts');
    const text = readFileSync(file, 'utf8');
    const request = { file, text, bindings: ['scaledGain', 'scaledGainBackward'] };
    const first = await bundler.bundle(request);
    const second = await bundler.bundle(request);
    assert.ok(first.ok && second.ok);
    assert.equal(second.cached, true);
    assert.equal(second.key, first.key);
    assert.deepEqual(bundler.stats, { builds: 1, cacheHits: 1, failures: 0, diskHits: 0 });

    writeFileSync(join(work, 'lib', 'scale.ts'), 'export const PANEL_SCALE = 3;\n');
    const third = await bundler.bundle(request);
    assert.ok(third.ok);
    assert.equal(third.cached, false);
    assert.notEqual(third.key, first.key);
    assert.equal(bundler.stats.builds, 2);
    const y = (exposedBy(third.code).scaledGain as (x: Float64Array) => Float64Array)(new Float64Array([2]));
    assert.equal(y[0], 3);
  });

  it('a changed import turns a passing op into a mismatch through the Checker', async () => {
    const checker = new Checker({ settings: settingsWith({}) });
    try {
      const file = join(work, 'ops.ts');
      writeFileSync(join(work, 'lib', 'scale.ts'), 'export const PANEL_SCALE = 1.5;\n');
      const before = await checker.checkFile(file);
      assert.equal(resultOf(before, 'scaledGain').verdict, 'pass', describeResults(before));
      const again = await checker.checkFile(file);
      assert.equal(resultOf(again, 'scaledGain').verdict, 'pass');
      assert.equal(checker.stats.bundle.cacheHits, 1);
      // The backward still says 0.75; the forward's slope becomes 0.5 × 2.5 = 1.25.
      writeFileSync(join(work, 'lib', 'scale.ts'), 'export const PANEL_SCALE = 2.5;\n');
      const after = await checker.checkFile(file);
      assert.equal(resultOf(after, 'scaledGain').verdict, 'mismatch', describeResults(after));
      assert.equal(checker.stats.bundle.builds, 2);
    } finally {
      await checker.dispose();
    }
  });
});

describe('bundle: exposed bindings', () => {
  it('only plain identifiers are spliced into code', async () => {
    assert.match(exposeCode(['softplus', 'Layer']), /"Layer": typeof Layer !== 'undefined' \? Layer : undefined/);
    assert.doesNotMatch(exposeCode(['a; process.exit()']), /process/);
    const r = await new Bundler().bundle({ file: fixture('console.ts'), text: 'export const a = 1;', bindings: ['a;b'] });
    assert.equal(r.ok, false);
  });
});
