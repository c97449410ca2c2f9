// The extension manifest (package.json) against the code: every `gradientProbe.*` setting
// agrees with the editor settings reader, the project file's schema and DEFAULT_SETTINGS;
// every command the code registers is declared and vice versa; trust and packaging are declared.

import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { COMMAND_TITLES } from '../../client/src/commandIds';
import { DEFAULT_SETTINGS } from '../../server/src/engine/settings';
import { projectConfigSchema } from '../../server/src/project/configSchema';
import { CHECK_WHEN_VALUES, EDITOR_CHECK_KEYS, EDITOR_ONLY_DEFAULTS, EDITOR_ONLY_KEYS, readEditorSettings, TYPING_PAUSE_RANGE } from '../../server/src/lsp/settings';
import { repoRoot } from '../lsp/lspSession';

type Schema = Record<string, unknown>;
const root = repoRoot();
const manifest = JSON.parse(readFileSync(join(root, 'package.json'), 'utf8')) as {
  main: string;
  activationEvents: string[];
  capabilities: { untrustedWorkspaces: { supported: unknown; description?: string; restrictedConfigurations?: string[] } };
  contributes: { commands: { command: string; title: string }[]; configuration: { properties: Record<string, Schema> } };
  scripts: Record<string, string>;
};
const properties = manifest.contributes.configuration.properties;

/** The project file schema's entry for a dotted key ("tolerance.f64"). */
function projectSchemaOf(dotted: string): Schema {
  let node = projectConfigSchema() as Schema;
  for (const part of dotted.split('.')) node = (node.properties as Record<string, Schema>)[part]!;
  assert.ok(node, `the project schema has no "${dotted}"`);
  return node;
}

describe('extension manifest', () => {
  it('declares exactly the editor settings the reader knows, under one prefix', () => {
    const expected = [...EDITOR_ONLY_KEYS, ...EDITOR_CHECK_KEYS].map((k) => `gradientProbe.${k}`).sort();
    assert.deepEqual(Object.keys(properties).sort(), expected);
    for (const [key, schema] of Object.entries(properties)) {
      assert.ok(typeof schema.markdownDescription === 'string' && schema.markdownDescription.length > 20, `${key} is documented`);
    }
  });

  it("gives each check setting the project file's type, bounds and default (DEFAULT_SETTINGS)", () => {
    for (const key of EDITOR_CHECK_KEYS) {
      const mine = properties[`gradientProbe.${key}`]!;
      const theirs = projectSchemaOf(key);
      for (const field of ['type', 'minimum', 'maximum', 'exclusiveMinimum', 'exclusiveMaximum', 'default']) {
        assert.deepEqual(mine[field], theirs[field], `gradientProbe.${key}.${field}`);
      }
    }
    // Spelled out against the one place for defaults, so a drift in either schema shows here too.
    assert.equal(properties['gradientProbe.seed']!.default, DEFAULT_SETTINGS.seed);
    assert.equal(properties['gradientProbe.tolerance.f64']!.default, DEFAULT_SETTINGS.toleranceF64);
    assert.equal(properties['gradientProbe.tolerance.f32']!.default, DEFAULT_SETTINGS.toleranceF32);
    assert.equal(properties['gradientProbe.timeLimitMs']!.default, DEFAULT_SETTINGS.timeLimitMs);
    assert.equal(properties['gradientProbe.memoryLimitMb']!.default, DEFAULT_SETTINGS.memoryLimitMb);
    assert.equal(properties['gradientProbe.largeParamElements']!.default, DEFAULT_SETTINGS.largeParamElements);
  });

  it("gives the editor-only settings the reader's values, defaults and bounds", () => {
    const when = properties['gradientProbe.checkWhen']!;
    assert.deepEqual(when.enum, [...CHECK_WHEN_VALUES]);
    assert.equal((when.enumDescriptions as string[]).length, CHECK_WHEN_VALUES.length);
    assert.equal(when.default, EDITOR_ONLY_DEFAULTS.checkWhen);
    const pause = properties['gradientProbe.typingPauseMs']!;
    assert.equal(pause.default, EDITOR_ONLY_DEFAULTS.typingPauseMs);
    assert.equal(pause.minimum, TYPING_PAUSE_RANGE.minimum);
    assert.equal(pause.maximum, TYPING_PAUSE_RANGE.maximum);
    // The untrusted-workspace opt-in is the user's alone: a workspace must not be able to set it.
    const isolated = properties['gradientProbe.isolatedWhenUntrusted']!;
    assert.equal(isolated.default, EDITOR_ONLY_DEFAULTS.isolatedWhenUntrusted);
    assert.equal(isolated.default, false);
    assert.equal(isolated.scope, 'application');
  });

  it('reads the manifest defaults back as the engine defaults, with no complaint', () => {
    // What VS Code sends when the user changed nothing: the schema defaults, nested by dots.
    const section: Record<string, unknown> = {};
    for (const [key, schema] of Object.entries(properties)) {
      const parts = key.replace(/^gradientProbe\./, '').split('.');
      let node = section;
      for (const part of parts.slice(0, -1)) node = (node[part] ??= {}) as Record<string, unknown>;
      node[parts.at(-1)!] = schema.default;
    }
    const read = readEditorSettings(section);
    assert.deepEqual(read.problems, []);
    assert.deepEqual({ ...DEFAULT_SETTINGS, ...read.values.settings }, DEFAULT_SETTINGS);
    assert.equal(read.checkWhen, EDITOR_ONLY_DEFAULTS.checkWhen);
  });

  it('drops an invalid user value with a message naming it, keeping the others', () => {
    const read = readEditorSettings({ seed: 7, tolerance: { f64: 'tight', f32: 2e-3 }, checkWhen: 'sometimes' });
    assert.equal(read.values.settings.seed, 7);
    assert.equal(read.values.settings.toleranceF32, 2e-3);
    assert.equal(read.values.settings.toleranceF64, undefined);
    assert.equal(read.problems.length, 2);
    assert.match(read.problems.join('\n'), /gradientProbe\.tolerance\.f64/);
    assert.match(read.problems.join('\n'), /gradientProbe\.checkWhen/);
  });

  it('declares every command the client registers, with a title', () => {
    const declared = Object.fromEntries(manifest.contributes.commands.map((c) => [c.command, c.title]));
    assert.deepEqual(declared, { ...COMMAND_TITLES });
  });

  it('declares limited support for untrusted workspaces, activation and the scripts', () => {
    assert.equal(manifest.capabilities.untrustedWorkspaces.supported, 'limited');
    assert.match(manifest.capabilities.untrustedWorkspaces.description ?? '', /runs/);
    assert.deepEqual(manifest.capabilities.untrustedWorkspaces.restrictedConfigurations, ['gradientProbe.isolatedWhenUntrusted']);
    assert.ok(manifest.activationEvents.includes('onLanguage:typescript'));
    assert.equal(manifest.main, './dist/client.js');
    assert.match(manifest.scripts.package!, /package-vsix/);
    assert.match(manifest.scripts['test:editor']!, /test\/editor\/host\/run\.mjs/);
  });

  it('ships only the bundles through an allow-list .vscodeignore', () => {
    const lines = readFileSync(join(root, '.vscodeignore'), 'utf8')
      .split('\n')
      .map((l) => l.trim())
      .filter((l) => l && !l.startsWith('#'));
    assert.equal(lines[0], '**', 'ignore everything first');
    const included = lines.filter((l) => l.startsWith('!')).map((l) => l.slice(1));
    for (const needed of ['package.json', 'README.md', 'dist/client.js', 'dist/server.js', 'dist/sandbox-child.js', 'dist/engine-in-sandbox.js', 'dist/isolated-worker.js']) {
      assert.ok(included.includes(needed), `.vscodeignore re-includes ${needed}`);
    }
    assert.ok(!included.some((l) => l.startsWith('server/') || l.startsWith('client/') || l.startsWith('test/')), 'no sources or tests');
    for (const needed of ['CHANGELOG.md', 'images/*.png']) assert.ok(included.includes(needed), `.vscodeignore re-includes ${needed}`);
  });

  it('has what the marketplace page needs: icon, keywords, a short README in the verdict words, a CHANGELOG', () => {
    const pkg = JSON.parse(readFileSync(join(root, 'package.json'), 'utf8')) as { icon?: string; keywords?: string[] };
    assert.match(pkg.icon ?? '', /^images\/[\w-]+\.png$/);
    assert.ok((pkg.keywords ?? []).includes('gradient'));
    // The icon is a PNG of at least 128×128 (width and height are the IHDR's first two fields).
    const png = readFileSync(join(root, 'client', 'marketplace', 'icon.png'));
    assert.equal(png.subarray(1, 4).toString('ascii'), 'PNG');
    assert.ok(png.readUInt32BE(16) >= 128 && png.readUInt32BE(20) >= 128);
    const readme = readFileSync(join(root, 'client', 'marketplace', 'README.md'), 'utf8');
    for (const word of ['`pass`', '`mismatch`', '`inconclusive`', '`error`', 'Workspace trust', 'Settings']) assert.ok(readme.includes(word), word);
    assert.match(readFileSync(join(root, 'client', 'marketplace', 'CHANGELOG.md'), 'utf8'), /^## \d+\.\d+\.\d+$/m);
  });
});
