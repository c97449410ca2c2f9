// The Checker's discovery cache, through the real Checker (real TypeScript parse, esbuild and
// runner): an unchanged file is parsed once, and any change (the file's own text, an unsaved
// buffer, an imported file) gives a fresh result; a caller that changes a result it was given
// changes no later result; the cache keeps a bounded number of files.
import assert from 'node:assert/strict';
import { cpSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Checker } from '../../server/src/core/checker';
import { DISCOVERY_CACHE_FILES, DiscoveryCache } from '../../server/src/core/discoveryCache';
import { describeResults, fixture, resultOf, settingsWith } from './helpers';

describe('discovery cache (through the Checker)', function () {
  this.timeout(60_000);
  let work: string;
  let file: string;
  let original: string;
  let checker: Checker;
  beforeEach(() => {
    work = mkdtempSync(join(tmpdir(), 'gp-discovery-'));
    cpSync(fixture('withdeps'), work, { recursive: true });
    file = join(work, 'ops.ts');
    original = readFileSync(file, 'utf8');
    checker = new Checker({ settings: settingsWith({}) });
  });
  afterEach(async () => {
    await checker.dispose();
    rmSync(work, { recursive: true, force: true });
  });

  it('parses an unchanged file once, and again after its annotations change on disk', async () => {
    const first = await checker.checkFile(file);
    const again = await checker.checkFile(file);
    assert.equal(resultOf(again, 'scaledGain').verdict, 'pass', describeResults(again));
    assert.equal(resultOf(again, 'scaledGain').params[0]?.elements, resultOf(first, 'scaledGain').params[0]?.elements);
    assert.deepEqual(checker.stats.discovery, { hits: 1, parses: 1 });

    // Same length, another sample shape: a cache keyed on anything less than the text would miss it.
    writeFileSync(file, original.replace('@sample x f64[3]', '@sample x f64[7]'));
    const edited = await checker.checkFile(file);
    assert.equal(resultOf(edited, 'scaledGain').params[0]?.elements, 7, describeResults(edited));
    assert.equal(resultOf(first, 'scaledGain').params[0]?.elements, 3);
    assert.equal(checker.stats.discovery.parses, 2);
  });

  it('discovers an unsaved buffer from its text, not from the file on disk', async () => {
    await checker.checkFile(file);
    const buffer = original.replace('@backward scaledGainBackward', '@backward missingBackward');
    const unsaved = await checker.checkFile(file, { text: buffer });
    const r = resultOf(unsaved, 'scaledGain');
    assert.equal(r.verdict, 'error', describeResults(unsaved));
    assert.equal(r.failure, 'annotation');
    assert.match(r.message, /missingBackward/);
    // Back to the disk's text: the passing op again.
    assert.equal(resultOf(await checker.checkFile(file), 'scaledGain').verdict, 'pass');
  });

  it('a changed import gives a fresh result while the file itself is served from the cache', async () => {
    writeFileSync(join(work, 'lib', 'scale.ts'), 'export const PANEL_SCALE = 1.5;\n');
    assert.equal(resultOf(await checker.checkFile(file), 'scaledGain').verdict, 'pass');
    // The backward says 0.75; the forward's slope becomes 0.5 × 2.5 = 1.25 (fixture's comment).
    writeFileSync(join(work, 'lib', 'scale.ts'), 'export const PANEL_SCALE = 2.5;\n');
    const after = await checker.checkFile(file);
    assert.equal(resultOf(after, 'scaledGain').verdict, 'mismatch', describeResults(after));
    assert.equal(checker.stats.discovery.hits, 1);
    assert.equal(checker.stats.bundle.builds, 2);
  });

  it("a caller changing a result's problems changes no later result", async () => {
    const broken = original.replace('@backward scaledGainBackward', '@backward missingBackward');
    writeFileSync(file, broken);
    const first = resultOf(await checker.checkFile(file), 'scaledGain');
    const problems = first.problems ?? [];
    assert.ok(problems.length > 0, first.message);
    const message = problems[0]!.message;
    problems[0]!.message = 'changed by the caller';
    problems.push({ line: 1, column: 1, message: 'added by the caller' });
    const second = resultOf(await checker.checkFile(file), 'scaledGain');
    assert.equal(checker.stats.discovery.hits, 1);
    assert.equal(second.problems?.length, problems.length - 1);
    assert.equal(second.problems?.[0]?.message, message);
  });
});

describe('discovery cache: bounds', () => {
  it(`keeps at most ${DISCOVERY_CACHE_FILES} files, the least recently used going first`, () => {
    const cache = new DiscoveryCache();
    const text = '/**\n * @backward fBackward\n */\nexport function f(x: number): number {\n  return x;\n}\n';
    const path = (i: number): string => join(tmpdir(), `gp-bounds-${i}.ts`);
    cache.list(path(0), text);
    for (let i = 1; i <= DISCOVERY_CACHE_FILES; i++) {
      cache.list(path(i), text);
      // File 1 stays recently used: file 0 is the oldest when the cache overflows.
      cache.list(path(1), text);
    }
    const parses = cache.stats.parses;
    assert.equal(parses, DISCOVERY_CACHE_FILES + 1);
    cache.list(path(1), text);
    assert.equal(cache.stats.parses, parses, 'a recently used file is kept');
    cache.list(path(0), text);
    assert.equal(cache.stats.parses, parses + 1, 'the oldest file was let go');
    // Discovery of the listed file, as the parse gives it.
    assert.deepEqual(
      cache.list(path(0), text).ops.map((op) => [op.forward, op.backward]),
      [['f', 'fBackward']],
    );
  });
});
