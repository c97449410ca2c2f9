// Tests of the project configuration file: defaults, the search, the merge order, and that
// every kind of bad value is refused with a message naming the file and the field.

import assert from 'node:assert/strict';
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { DEFAULT_SETTINGS } from '../../server/src/engine/settings';
import {
  CONFIG_FILE_NAME,
  ConfigError,
  checkSettingValue,
  findConfigFile,
  loadConfigFile,
  loadProjectConfig,
  readConfigFile,
  readConfigValues,
} from '../../server/src/project/config';
import { CONFIG_FIELDS } from '../../server/src/project/configFields';
import { projectConfigSchema } from '../../server/src/project/configSchema';

/** A temporary repository (it has `.git`, so the search never looks above it). */
function makeRepo(): string {
  const root = mkdtempSync(join(tmpdir(), 'gp-config-'));
  mkdirSync(join(root, '.git'));
  return root;
}

function writeConfig(dir: string, content: unknown): string {
  const file = join(dir, CONFIG_FILE_NAME);
  writeFileSync(file, typeof content === 'string' ? content : JSON.stringify(content, null, 2));
  return file;
}

/** Runs `fn`, expecting a ConfigError; returns it. */
function configErrorOf(fn: () => unknown): ConfigError {
  try {
    fn();
  } catch (err) {
    assert.ok(err instanceof ConfigError, `expected ConfigError, got ${String(err)}`);
    return err;
  }
  assert.fail('expected a ConfigError, but nothing was thrown');
}

describe('project configuration', () => {
  const made: string[] = [];
  const repo = (): string => {
    const r = makeRepo();
    made.push(r);
    return r;
  };
  after(() => {
    for (const dir of made) rmSync(dir, { recursive: true, force: true });
  });

  it('gives the engine defaults and no globs when there is no file', () => {
    const root = repo();
    const config = loadProjectConfig(root);
    assert.deepEqual(config.settings, DEFAULT_SETTINGS);
    assert.deepEqual(config.include, []);
    assert.deepEqual(config.exclude, []);
    assert.equal(config.file, undefined);
  });

  it('reads every key into the matching setting', () => {
    const root = repo();
    const file = writeConfig(root, {
      $schema: './schema.json',
      seed: 99,
      tolerance: { f64: 2e-7, f32: 5e-4 },
      timeLimitMs: 2500,
      memoryLimitMb: 512,
      largeParamElements: 100,
      upstreamProbes: 3,
      dotProductProbes: 6,
      subsetElements: 8,
      kinkResamples: 1,
      maxElements: 1000,
      include: ['src/**/*.ts'],
      exclude: [' **/*.spec.ts '],
    });
    const config = loadProjectConfig(root);
    assert.equal(config.file, file);
    assert.deepEqual(config.settings, {
      seed: 99,
      toleranceF64: 2e-7,
      toleranceF32: 5e-4,
      timeLimitMs: 2500,
      memoryLimitMb: 512,
      largeParamElements: 100,
      upstreamProbes: 3,
      dotProductProbes: 6,
      subsetElements: 8,
      kinkResamples: 1,
      maxElements: 1000,
    });
    assert.deepEqual(config.include, ['src/**/*.ts']);
    assert.deepEqual(config.exclude, ['**/*.spec.ts'], 'globs are trimmed');
  });

  it('keeps defaults for keys the file leaves out, and overrides win over the file', () => {
    const root = repo();
    writeConfig(root, { seed: 7, tolerance: { f32: 2e-3 } });
    const config = loadProjectConfig(root, { seed: 8, timeLimitMs: 1234 });
    assert.equal(config.settings.seed, 8);
    assert.equal(config.settings.timeLimitMs, 1234);
    assert.equal(config.settings.toleranceF32, 2e-3);
    assert.equal(config.settings.toleranceF64, DEFAULT_SETTINGS.toleranceF64);
    assert.equal(config.settings.memoryLimitMb, DEFAULT_SETTINGS.memoryLimitMb);
  });

  it('finds the file in a parent folder, but not above the repository root', () => {
    const outer = mkdtempSync(join(tmpdir(), 'gp-config-outer-'));
    made.push(outer);
    writeConfig(outer, { seed: 1 });
    const root = join(outer, 'repo');
    mkdirSync(join(root, '.git'), { recursive: true });
    const deep = join(root, 'a', 'b');
    mkdirSync(deep, { recursive: true });
    assert.equal(findConfigFile(deep), undefined, 'the file above .git belongs to something else');
    const file = writeConfig(join(root, 'a'), { seed: 2 });
    assert.equal(findConfigFile(deep), file);
    assert.equal(loadProjectConfig(deep).settings.seed, 2);
  });

  it('stops the search at the nearest package root (a folder with package.json) too', () => {
    const outer = repo();
    writeConfig(outer, { seed: 1 });
    const project = join(outer, 'user-project');
    mkdirSync(join(project, 'src'), { recursive: true });
    writeFileSync(join(project, 'package.json'), '{"name": "user-project"}');
    assert.equal(findConfigFile(join(project, 'src')), undefined, "a parent folder's file does not reach into a package of its own");
    const own = writeConfig(project, { seed: 3 });
    assert.equal(findConfigFile(join(project, 'src')), own, 'the package root itself is still searched');
  });

  it('reads JSON with comments and trailing commas, as editors write it', () => {
    const root = repo();
    writeConfig(
      root,
      ['// Quillmere Glasshouse checks', '{', '  "seed": 11, /* fixed for CI */', '  "tolerance": { "f64": 2e-7, },', '  "exclude": ["gen/**", "a//b/**",],', '}'].join('\n'),
    );
    const config = loadProjectConfig(root);
    assert.equal(config.settings.seed, 11);
    assert.equal(config.settings.toleranceF64, 2e-7);
    assert.deepEqual(config.exclude, ['gen/**', 'a//b/**'], 'a "//" inside a string is no comment');
  });

  it('still points a syntax error after a comment at its own line and column', () => {
    const root = repo();
    writeConfig(root, '{\n  /* one */ "seed": 3,\n  oops\n}\n');
    assert.match(configErrorOf(() => loadProjectConfig(root)).message, /gradient-probe\.json:3:3: not valid JSON/);
  });

  it('accepts the dotted spelling of a nested key, and refuses both spellings at once', () => {
    const root = repo();
    writeConfig(root, { 'tolerance.f64': 3e-7, tolerance: { f32: 2e-3 } });
    const config = loadProjectConfig(root);
    assert.equal(config.settings.toleranceF64, 3e-7);
    assert.equal(config.settings.toleranceF32, 2e-3);
    writeConfig(root, { 'tolerance.f64': 3e-7, tolerance: { f64: 2e-7 } });
    const err = configErrorOf(() => loadProjectConfig(root));
    assert.match(err.message, /"tolerance\.f64" is given twice/);
    assert.equal(err.field, 'tolerance.f64');
  });

  it('reports every problem of a file at once, one line each, naming the file', () => {
    const root = repo();
    const file = writeConfig(root, { seed: -1, tolerance: { f64: 'abc', f16: 1 }, colour: 'red', exclude: [''] });
    const err = configErrorOf(() => loadProjectConfig(root));
    const lines = err.message.split('\n');
    assert.equal(lines.length, 5, err.message);
    for (const line of lines) assert.ok(line.startsWith(`${file}: `) || line.startsWith(`${CONFIG_FILE_NAME}: `), line);
    assert.deepEqual(err.problems.map((p) => p.field).sort(), ['colour', 'exclude[0]', 'seed', 'tolerance.f16', 'tolerance.f64']);
  });

  it("tells which keys a file sets, without defaults, for the editor's merge", () => {
    const root = repo();
    const file = writeConfig(root, { tolerance: { f32: 4e-3 }, exclude: ['gen/**'] });
    assert.deepEqual(readConfigFile(file), { settings: { toleranceF32: 4e-3 }, exclude: ['gen/**'] });
    writeConfig(root, { seed: 'x' });
    assert.throws(() => readConfigFile(file), /"seed" must be/);
  });

  it('reads a named file with loadConfigFile, and names a missing one', () => {
    const root = repo();
    const file = join(root, 'ci-probe.json');
    writeFileSync(file, '{"seed": 5}');
    assert.equal(loadConfigFile(file).settings.seed, 5);
    const err = configErrorOf(() => loadConfigFile(join(root, 'nope.json')));
    assert.match(err.message, /nope\.json: configuration file not found/);
    assert.equal(err.file, join(root, 'nope.json'));
  });

  // Every rule, each with the field the message must name and a fragment of the expectation.
  const badValues: { name: string; content: unknown; field?: string; message: RegExp }[] = [
    { name: 'tolerance as text', content: { tolerance: { f64: 'abc' } }, field: 'tolerance.f64', message: /"tolerance\.f64" must be a positive number below 1, got "abc"/ },
    { name: 'zero tolerance', content: { tolerance: { f32: 0 } }, field: 'tolerance.f32', message: /"tolerance\.f32" must be a positive number below 1, got 0/ },
    { name: 'tolerance of 1', content: { tolerance: { f64: 1 } }, field: 'tolerance.f64', message: /got 1$/ },
    { name: 'tolerance not an object', content: { tolerance: 1e-6 }, field: 'tolerance', message: /"tolerance" must be an object with keys "f64", "f32", got 0\.000001/ },
    { name: 'unknown tolerance key', content: { tolerance: { f16: 1e-2 } }, field: 'tolerance.f16', message: /unknown key "tolerance\.f16"/ },
    { name: 'negative seed', content: { seed: -1 }, field: 'seed', message: /"seed" must be an integer of at least 0, got -1/ },
    { name: 'fractional seed', content: { seed: 1.5 }, field: 'seed', message: /"seed" must be .*got 1\.5/ },
    { name: 'seed as text', content: { seed: '12' }, field: 'seed', message: /"seed" must be .*got "12"/ },
    { name: 'zero time limit', content: { timeLimitMs: 0 }, field: 'timeLimitMs', message: /"timeLimitMs" must be an integer from 1 to 2147483647, got 0/ },
    { name: 'time limit past the timer range', content: { timeLimitMs: 2 ** 31 }, field: 'timeLimitMs', message: /got 2147483648/ },
    { name: 'tiny memory limit', content: { memoryLimitMb: 8 }, field: 'memoryLimitMb', message: /"memoryLimitMb" must be an integer of at least 16, got 8/ },
    { name: 'null large-param size', content: { largeParamElements: null }, field: 'largeParamElements', message: /got null/ },
    { name: 'zero upstream probes', content: { upstreamProbes: 0 }, field: 'upstreamProbes', message: /"upstreamProbes" must be an integer of at least 1/ },
    { name: 'negative kink resamples', content: { kinkResamples: -2 }, field: 'kinkResamples', message: /"kinkResamples"/ },
    { name: 'include not an array', content: { include: 'src/**' }, field: 'include', message: /"include" must be an array of glob strings, got "src\/\*\*"/ },
    { name: 'empty exclude entry', content: { exclude: ['a/**', ''] }, field: 'exclude[1]', message: /"exclude\[1\]" must be a non-empty glob string, got ""/ },
    { name: 'misspelt key', content: { tolerence: { f64: 1e-6 } }, field: 'tolerence', message: /unknown key "tolerence" \(did you mean "tolerance"\?\)/ },
    { name: 'unrelated key', content: { colour: 'red' }, field: 'colour', message: /unknown key "colour"$/ },
    { name: 'top level array', content: [1, 2], message: /must hold a JSON object, got an array/ },
  ];

  for (const bad of badValues) {
    it(`refuses ${bad.name}, naming the file and the field`, () => {
      const root = repo();
      const file = writeConfig(root, bad.content);
      const err = configErrorOf(() => loadProjectConfig(root));
      assert.match(err.message, new RegExp(`^${escapeRegExp(file)}: |^${CONFIG_FILE_NAME}: `), err.message);
      assert.match(err.message, bad.message);
      assert.equal(err.field, bad.field);
      assert.equal(err.file, file);
    });
  }

  it('points a JSON syntax error at its line and column', () => {
    const root = repo();
    writeConfig(root, '{\n  "seed": 3,\n  oops\n}\n');
    const err = configErrorOf(() => loadProjectConfig(root));
    // "oops" starts at line 3, column 3: where JSON.parse gives up.
    assert.match(err.message, /gradient-probe\.json:3:3: not valid JSON/);
    assert.equal(err.field, undefined);
  });

  it('refuses bad overrides with the same rules', () => {
    const root = repo();
    const err = configErrorOf(() => loadProjectConfig(root, { toleranceF64: -1 }));
    assert.match(err.message, /^settings: "tolerance\.f64" must be a positive number below 1, got -1/);
    assert.equal(err.field, 'tolerance.f64');
  });

  it("normalises values of another source under that source's name", () => {
    assert.deepEqual(readConfigValues({ tolerance: { f64: 1e-5 }, include: ['a/*.ts'] }, 'user settings'), {
      settings: { toleranceF64: 1e-5 },
      include: ['a/*.ts'],
    });
    assert.throws(() => readConfigValues({ seed: 'x' }, 'user settings'), /^ConfigError: user settings: "seed" must be/);
  });

  it('checks one setting value as a flag would give it', () => {
    assert.equal(checkSettingValue('memoryLimitMb', 64), undefined);
    assert.equal(checkSettingValue('memoryLimitMb', 15), 'an integer of at least 16');
    assert.equal(checkSettingValue('toleranceF32', Number.NaN), 'a positive number below 1');
  });

  describe('JSON schema', () => {
    const schema = projectConfigSchema() as { properties: Record<string, Record<string, unknown>>; additionalProperties: boolean };

    function fieldSchema(path: string): Record<string, unknown> {
      const [head, tail] = path.split('.') as [string, string | undefined];
      const top = schema.properties[head]!;
      return tail === undefined ? top : (top['properties'] as Record<string, Record<string, unknown>>)[tail]!;
    }

    /** What the schema's type and bounds say of a value (the subset of draft-07 we emit). */
    function schemaAccepts(s: Record<string, unknown>, v: unknown): boolean {
      if (typeof v !== 'number' || !Number.isFinite(v)) return false;
      if (s['type'] === 'integer' && !Number.isInteger(v)) return false;
      if (typeof s['minimum'] === 'number' && v < s['minimum']) return false;
      if (typeof s['exclusiveMinimum'] === 'number' && v <= s['exclusiveMinimum']) return false;
      if (typeof s['maximum'] === 'number' && v > s['maximum']) return false;
      if (typeof s['exclusiveMaximum'] === 'number' && v >= s['exclusiveMaximum']) return false;
      return true;
    }

    it('has every key, with the engine default as its default', () => {
      assert.equal(schema.additionalProperties, false);
      for (const field of CONFIG_FIELDS) {
        assert.equal(fieldSchema(field.path)['default'], DEFAULT_SETTINGS[field.setting], field.path);
      }
      assert.deepEqual(Object.keys(schema.properties).sort(), [
        '$schema',
        'dotProductProbes',
        'exclude',
        'include',
        'kinkResamples',
        'largeParamElements',
        'maxElements',
        'memoryLimitMb',
        'seed',
        'subsetElements',
        'timeLimitMs',
        'tolerance',
        'tolerance.f32',
        'tolerance.f64',
        'upstreamProbes',
      ]);
    });

    it('agrees with the reader on values at and around every bound', () => {
      for (const field of CONFIG_FIELDS) {
        const s = fieldSchema(field.path);
        const probes = [field.minimum - 1, field.minimum, field.minimum + 0.5, field.minimum + 1, 0, 1, 1e-9, 2 ** 31 - 1, 2 ** 31, 'x', null];
        for (const v of probes) {
          assert.equal(schemaAccepts(s, v), field.check(v) === undefined, `${field.path} = ${String(v)}`);
        }
      }
    });
  });
});

function escapeRegExp(text: string): string {
  return text.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');
}
