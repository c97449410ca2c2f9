// Tests of the workspace file walk: extensions, skipped folders, .gitignore rules (nested,
// negated, anchored), include/exclude globs relative to the configuration file, explicit files.

import assert from 'node:assert/strict';
import { mkdirSync, mkdtempSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, relative } from 'node:path';
import { DEFAULT_SETTINGS } from '../../server/src/engine/settings';
import type { ProjectConfig } from '../../server/src/project/config';
import { findSourceFiles, isSourceFileName, SourcePathError } from '../../server/src/project/files';
import { isIgnored, parseGitignore } from '../../server/src/project/gitignore';

/** Creates the files (content irrelevant) under a new temporary repository. */
function makeTree(files: Record<string, string>): string {
  const root = mkdtempSync(join(tmpdir(), 'gp-files-'));
  mkdirSync(join(root, '.git'));
  for (const [path, content] of Object.entries(files)) {
    mkdirSync(dirname(join(root, path)), { recursive: true });
    writeFileSync(join(root, path), content);
  }
  return root;
}

function config(partial: Partial<ProjectConfig> = {}): ProjectConfig {
  return { settings: DEFAULT_SETTINGS, include: [], exclude: [], ...partial };
}

/** The walk's result relative to `root`, with `/`. */
function walk(root: string, paths: string[], cfg: ProjectConfig, cwd = root): string[] {
  return findSourceFiles(paths, cfg, cwd).map((f) => relative(root, f).split('\\').join('/'));
}

describe('workspace file walk', () => {
  const made: string[] = [];
  const tree = (files: Record<string, string>): string => {
    const root = makeTree(files);
    made.push(root);
    return root;
  };
  after(() => {
    for (const dir of made) rmSync(dir, { recursive: true, force: true });
  });

  it('takes .ts/.tsx/.mts/.cts sources but not declarations or other files', () => {
    assert.deepEqual(['a.ts', 'b.tsx', 'c.mts', 'd.cts', 'e.d.ts', 'f.d.mts', 'g.js', 'h.json', 'I.TS'].filter(isSourceFileName), ['a.ts', 'b.tsx', 'c.mts', 'd.cts', 'I.TS']);
  });

  it('walks folders in sorted order and skips node_modules, .git and dist', () => {
    const root = tree({
      'src/z.ts': '',
      'src/a.ts': '',
      'src/B.tsx': '',
      'src/types.d.ts': '',
      'src/tool.js': '',
      'node_modules/pkg/index.ts': '',
      'src/node_modules/inner.ts': '',
      '.git/hooks/x.ts': '',
      'dist/out.ts': '',
      'lib/dist/also.ts': '',
      'top.mts': '',
    });
    assert.deepEqual(walk(root, [], config()), ['src/B.tsx', 'src/a.ts', 'src/z.ts', 'top.mts']);
  });

  it('applies .gitignore rules: folders, globs, negation, anchoring and nested files', () => {
    const root = tree({
      '.gitignore': ['# build output', 'generated/', '*.gen.ts', '!keep.gen.ts', '/rootonly.ts', 'docs/*.ts', ''].join('\n'),
      'generated/a.ts': '',
      'src/generated/b.ts': '',
      'src/x.gen.ts': '',
      'src/keep.gen.ts': '',
      'rootonly.ts': '',
      'src/rootonly.ts': '',
      'docs/page.ts': '',
      'docs/deep/page.ts': '',
      'src/sub/.gitignore': 'local.ts\n',
      'src/sub/local.ts': '',
      'src/sub/kept.ts': '',
      'src/local.ts': '',
    });
    assert.deepEqual(walk(root, [], config()), [
      'docs/deep/page.ts', // `docs/*.ts` is anchored and `*` does not cross a folder
      'src/keep.gen.ts',
      'src/local.ts', // the nested .gitignore governs only its own folder
      'src/rootonly.ts', // `/rootonly.ts` is anchored to the top
      'src/sub/kept.ts',
    ]);
  });

  it("applies the repository's .gitignore when the walk starts in a subfolder", () => {
    const root = tree({ '.gitignore': 'scratch/\n', 'pkg/scratch/a.ts': '', 'pkg/real.ts': '' });
    assert.deepEqual(walk(root, ['pkg'], config()), ['pkg/real.ts']);
  });

  it("filters by include and exclude globs relative to the configuration file's folder", () => {
    const root = tree({
      'proj/gradient-probe.json': '{}',
      'proj/src/ops.ts': '',
      'proj/src/ops.spec.ts': '',
      'proj/src/legacy/old.ts': '',
      'proj/tools/gen.ts': '',
    });
    const cfg = config({ include: ['src/**'], exclude: ['**/*.spec.ts', 'src/legacy/**'], file: join(root, 'proj', 'gradient-probe.json') });
    // Run from the repository root: the globs still start at proj/.
    assert.deepEqual(walk(root, ['proj'], cfg), ['proj/src/ops.ts']);
  });

  it('uses the current folder as the glob base when there is no configuration file', () => {
    const root = tree({ 'src/a.ts': '', 'test/a.test.ts': '' });
    assert.deepEqual(walk(root, [], config({ exclude: ['test/**'] })), ['src/a.ts']);
  });

  it('always takes a file named explicitly, even when ignored or excluded', () => {
    const root = tree({ '.gitignore': 'gen/\n', 'gen/made.ts': '', 'src/a.ts': '' });
    assert.deepEqual(walk(root, ['gen/made.ts', 'src'], config({ exclude: ['gen/**'] })), ['gen/made.ts', 'src/a.ts']);
  });

  it('lists each file once when paths overlap', () => {
    const root = tree({ 'src/a.ts': '', 'src/b.ts': '' });
    assert.deepEqual(walk(root, ['src', 'src/a.ts', '.'], config()), ['src/a.ts', 'src/b.ts']);
  });

  it('does not follow linked folders (they can loop) but takes linked files', () => {
    const root = tree({ 'src/a.ts': '', 'elsewhere/b.ts': '' });
    symlinkSync(join(root, 'src'), join(root, 'src', 'loop'));
    symlinkSync(join(root, 'elsewhere', 'b.ts'), join(root, 'src', 'linked.ts'));
    assert.deepEqual(walk(root, ['src'], config()), ['src/a.ts', 'src/linked.ts']);
  });

  it('refuses a missing path and a file that is not a TypeScript source, naming it', () => {
    const root = tree({ 'notes.md': '' });
    assert.throws(
      () => findSourceFiles(['missing/dir'], config(), root),
      (err: unknown) => err instanceof SourcePathError && err.message === 'missing/dir: no such file or folder',
    );
    assert.throws(
      () => findSourceFiles(['notes.md'], config(), root),
      (err: unknown) => err instanceof SourcePathError && /^notes\.md: not a TypeScript source/.test(err.message),
    );
  });

  it('parses .gitignore lines as git does for the common subset', () => {
    const base = '/r';
    const rules = parseGitignore('\\#literal.ts\n  \n*.log  \nbuild/\n!important.log\n', base);
    assert.equal(rules.rules.length, 4);
    assert.equal(isIgnored('/r/#literal.ts', false, [rules]), true);
    assert.equal(isIgnored('/r/deep/x.log', false, [rules]), true, 'trailing spaces are not part of the pattern');
    assert.equal(isIgnored('/r/deep/important.log', false, [rules]), false, 'a later negation re-includes');
    assert.equal(isIgnored('/r/a/build', true, [rules]), true);
    assert.equal(isIgnored('/r/a/build', false, [rules]), false, 'a trailing slash matches folders only');
    assert.equal(isIgnored('/elsewhere/x.log', false, [rules]), false, 'rules apply below their folder only');
  });
});
