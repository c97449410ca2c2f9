// Bundles kept on disk between runs (docs/code-shapes.md, "Imports"): a new Bundler (a new run of the
// command line) reuses the bundle of an unchanged file and its imports without building, and
// builds again when an import changed. Uses a cache folder of its own (GRADIENT_PROBE_BUNDLE_CACHE).
import assert from 'node:assert/strict';
import { mkdirSync, mkdtempSync, readdirSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { Bundler } from '../../server/src/sandbox/bundle';
import { BUNDLE_CACHE_ENV, bundleCacheDir, defaultBundleCacheDir } from '../../server/src/sandbox/bundleDiskCache';

describe('bundle: disk cache between runs', function () {
  this.timeout(60_000);
  let work: string;
  let cacheDir: string;
  let saved: string | undefined;

  before(() => {
    work = mkdtempSync(join(tmpdir(), 'gp-diskcache-'));
    cacheDir = join(work, 'cache');
    saved = process.env[BUNDLE_CACHE_ENV];
    process.env[BUNDLE_CACHE_ENV] = cacheDir;
    mkdirSync(join(work, 'src'));
    // Shape: an op importing a constant from another file, NodeNext-style (`.js` for a `.ts`).
    writeFileSync(join(work, 'src', 'gain.ts'), 'export const GAIN = 1.5;\n');
  });

  after(() => {
    if (saved === undefined) delete process.env[BUNDLE_CACHE_ENV];
    else process.env[BUNDLE_CACHE_ENV] = saved;
    rmSync(work, { recursive: true, force: true });
  });

  const text =
    "import { GAIN } from './gain.js';\nexport function scale(x: number): number { return GAIN * x; }\nexport function scaleBackward(_x: number, dy: number): number { return GAIN * dy; }\n";
  const request = () => ({ file: join(work, 'src', 'ops.ts'), text, bindings: ['scale', 'scaleBackward'] });

  it('a second run of an unchanged file reads the bundle from disk; a changed import builds again', async () => {
    const first = new Bundler({ diskCache: true, diskCacheMinBuildMs: 0 });
    const a = await first.bundle(request());
    assert.ok(a.ok);
    assert.equal(first.stats.builds, 1);
    assert.equal(readdirSync(cacheDir).filter((n) => n.endsWith('.json')).length, 1, 'one bundle stored');

    const second = new Bundler({ diskCache: true, diskCacheMinBuildMs: 0 });
    const b = await second.bundle(request());
    assert.ok(b.ok);
    assert.deepEqual(second.stats, { builds: 0, cacheHits: 0, failures: 0, diskHits: 1 });
    assert.equal(b.code, a.code);
    assert.deepEqual(b.inputs, a.inputs);
    // The source map came along: a bundle position still maps to the user's file.
    const line = b.code.split('\n').findIndex((l) => l.includes('GAIN * x')) + 1;
    assert.equal(b.originalPlace(line, b.code.split('\n')[line - 1]!.indexOf('GAIN * x'))?.file, join(work, 'src', 'ops.ts'));

    writeFileSync(join(work, 'src', 'gain.ts'), 'export const GAIN = 2.5; // retuned\n');
    const third = new Bundler({ diskCache: true, diskCacheMinBuildMs: 0 });
    const c = await third.bundle(request());
    assert.ok(c.ok);
    assert.equal(third.stats.builds, 1, 'the import changed: built again');
    assert.match(c.code, /2\.5/);
  });

  it('a fast build stays in memory only, so an editor re-bundling on every edit writes nothing', async () => {
    const before = readdirSync(cacheDir).length;
    const bundler = new Bundler({ diskCache: true, diskCacheMinBuildMs: 60_000 });
    const r = await bundler.bundle({ ...request(), text: `${text}// edit\n` });
    assert.ok(r.ok);
    assert.equal(readdirSync(cacheDir).length, before);
  });

  it('the default folder: private to the user in the OS temporary folder, never inside the project', () => {
    delete process.env[BUNDLE_CACHE_ENV];
    try {
      const dir = bundleCacheDir();
      assert.equal(dir, defaultBundleCacheDir());
      assert.ok(dir!.startsWith(tmpdir()), dir);
      if (typeof process.getuid === 'function') {
        const st = statSync(dirname(dir!));
        assert.equal(st.uid, process.getuid());
        assert.equal(st.mode & 0o022, 0, 'not writable by group or others');
      }
    } finally {
      process.env[BUNDLE_CACHE_ENV] = cacheDir;
    }
  });
});
