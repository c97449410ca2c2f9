// The project configuration file `gradient-probe.json`: finding it, validating it field by
// field, and merging it over DEFAULT_SETTINGS. The CLI and the language server both read it here.

import { existsSync, readFileSync, statSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { DEFAULT_SETTINGS, type CheckSettings } from '../engine/settings';
import { CONFIG_FIELDS, FILE_GLOB_KEYS, describeValue, fieldForSetting, type ConfigField } from './configFields';
import { nearestName } from '../text/nearestName';
import { relativeInside } from './paths';

/** The name of the project configuration file. */
export const CONFIG_FILE_NAME = 'gradient-probe.json';

/**
 * Default file globs when the configuration says nothing: no include restriction (every
 * TypeScript source the walk finds) and no extra exclusions. Not check settings, so they live
 * here rather than in engine/settings.ts.
 */
export const DEFAULT_FILE_GLOBS: { readonly include: readonly string[]; readonly exclude: readonly string[] } = {
  include: [],
  exclude: [],
};

/** Settings plus file globs, as the CLI and the language server use them. */
export interface ProjectConfig {
  settings: CheckSettings;
  /** Globs (relative to the folder of `file`, or the current folder) a source must match; [] = all. */
  include: string[];
  /** Globs (same base) that remove sources. */
  exclude: string[];
  /** Absolute path of the configuration file that was read, if any. */
  file?: string;
}

/** A bad configuration value or file. `field` is the dotted key ("tolerance.f64"). */
export class ConfigError extends Error {
  field?: string;
  file?: string;
  constructor(message: string, details: { field?: string; file?: string } = {}) {
    super(message);
    this.name = 'ConfigError';
    if (details.field !== undefined) this.field = details.field;
    if (details.file !== undefined) this.file = details.file;
  }
}

/** What one source of configuration values says, after validation. Absent keys stay absent. */
export interface ConfigValues {
  settings: Partial<CheckSettings>;
  include?: string[];
  exclude?: string[];
}

/**
 * Validates raw configuration values of any source (the parsed file, the editor's user
 * settings) in the file's shape and returns them normalised. Throws ConfigError whose message
 * starts with `source` and names the dotted field.
 */
export function readConfigValues(raw: unknown, source: string, file?: string): ConfigValues {
  const fail = (message: string, field?: string): never => {
    const details: { field?: string; file?: string } = {};
    if (field !== undefined) details.field = field;
    if (file !== undefined) details.file = file;
    throw new ConfigError(`${source}: ${message}`, details);
  };
  if (!isPlainObject(raw)) fail(`must hold a JSON object, got ${describeValue(raw)}`);
  const values: ConfigValues = { settings: {} };
  checkKeys(raw as Record<string, unknown>, '', fail);
  for (const field of CONFIG_FIELDS) {
    const value = lookup(raw as Record<string, unknown>, field.path);
    if (value === undefined) continue;
    const expected = field.check(value);
    if (expected !== undefined) fail(`"${field.path}" must be ${expected}, got ${describeValue(value)}`, field.path);
    (values.settings as Record<string, unknown>)[field.setting] = value;
  }
  for (const key of FILE_GLOB_KEYS) {
    const value = (raw as Record<string, unknown>)[key];
    if (value === undefined) continue;
    if (!Array.isArray(value)) fail(`"${key}" must be an array of glob strings, got ${describeValue(value)}`, key);
    const globs = value as unknown[];
    globs.forEach((glob, i) => {
      if (typeof glob !== 'string' || glob.trim() === '') {
        fail(`"${key}[${i}]" must be a non-empty glob string, got ${describeValue(glob)}`, `${key}[${i}]`);
      }
    });
    values[key] = (globs as string[]).map((g) => g.trim());
  }
  return values;
}

/**
 * Checks one settings value as given by a caller (a CLI flag, an editor setting). Returns
 * undefined when it is valid, else the expectation text ("a number greater than 0 and less than 1").
 */
export function checkSettingValue(key: keyof CheckSettings, value: unknown): string | undefined {
  const field = fieldForSetting(key);
  return field ? field.check(value) : 'a known setting';
}

/**
 * Finds `gradient-probe.json` in `dir` or its parents (stopping after a folder that holds `.git`,
 * or at the filesystem root), validates it, and merges DEFAULT_SETTINGS ← file ← overrides.
 */
export function loadProjectConfig(dir: string, overrides: Partial<CheckSettings> = {}): ProjectConfig {
  const file = findConfigFile(dir);
  if (file === undefined) return mergeConfig(undefined, { settings: {} }, overrides);
  return loadConfigFile(file, overrides);
}

/** Reads one named configuration file (the CLI's `--config FILE`), no search. */
export function loadConfigFile(file: string, overrides: Partial<CheckSettings> = {}): ProjectConfig {
  const abs = resolve(file);
  return mergeConfig(abs, readConfigFile(abs), overrides);
}

/**
 * What one configuration file says, validated but not merged: only the keys it sets (the
 * editor fills the rest from user settings). Throws ConfigError like loadConfigFile.
 */
export function readConfigFile(file: string): ConfigValues {
  const abs = resolve(file);
  const label = displayPath(abs);
  let text: string;
  try {
    if (!statSync(abs).isFile()) throw new Error('not a file');
    text = readFileSync(abs, 'utf8');
  } catch {
    throw new ConfigError(`${label}: configuration file not found or not readable`, { file: abs });
  }
  return readConfigValues(parseJsonText(text, label, abs), label, abs);
}

/** The configuration file that applies to `dir`, or undefined. */
export function findConfigFile(dir: string): string | undefined {
  let current = resolve(dir);
  for (;;) {
    const candidate = join(current, CONFIG_FILE_NAME);
    if (existsSync(candidate)) return candidate;
    // A repository root bounds the search: a file above it belongs to something else.
    if (existsSync(join(current, '.git'))) return undefined;
    const parent = dirname(current);
    if (parent === current) return undefined;
    current = parent;
  }
}

function mergeConfig(file: string | undefined, values: ConfigValues, overrides: Partial<CheckSettings>): ProjectConfig {
  const checkedOverrides = validateOverrides(overrides);
  const config: ProjectConfig = {
    settings: { ...DEFAULT_SETTINGS, ...values.settings, ...checkedOverrides },
    include: values.include ?? [...DEFAULT_FILE_GLOBS.include],
    exclude: values.exclude ?? [...DEFAULT_FILE_GLOBS.exclude],
  };
  if (file !== undefined) config.file = file;
  return config;
}

/** Overrides come from code (CLI flags, editor settings); they are held to the same rules. */
function validateOverrides(overrides: Partial<CheckSettings>): Partial<CheckSettings> {
  const out: Partial<CheckSettings> = {};
  for (const [key, value] of Object.entries(overrides) as [keyof CheckSettings, unknown][]) {
    if (value === undefined) continue;
    const field = fieldForSetting(key);
    if (!field) throw new ConfigError(`settings: unknown setting "${key}"`, { field: key });
    const expected = field.check(value);
    if (expected !== undefined) {
      throw new ConfigError(`settings: "${field.path}" must be ${expected}, got ${describeValue(value)}`, { field: field.path });
    }
    (out as Record<string, unknown>)[key] = value;
  }
  return out;
}

/** Rejects keys the file format does not know, with a "did you mean" when one is close. */
function checkKeys(obj: Record<string, unknown>, prefix: string, fail: (message: string, field?: string) => never): void {
  const known = knownKeysUnder(prefix);
  for (const key of Object.keys(obj)) {
    const path = prefix + key;
    if (!known.has(key)) {
      const guess = nearestName(key, [...known]);
      fail(`unknown key "${path}"${guess ? ` (did you mean "${prefix}${guess}"?)` : ''}`, path);
    }
    const isGroup = CONFIG_FIELDS.some((f) => f.path.startsWith(path + '.'));
    if (isGroup) {
      const value = obj[key];
      if (!isPlainObject(value)) {
        const members = CONFIG_FIELDS.filter((f) => f.path.startsWith(path + '.')).map((f) => f.path.slice(path.length + 1));
        fail(`"${path}" must be an object with keys ${members.map((m) => `"${m}"`).join(', ')}, got ${describeValue(value)}`, path);
      }
      checkKeys(value as Record<string, unknown>, path + '.', fail);
    }
  }
}

function knownKeysUnder(prefix: string): Set<string> {
  const keys = new Set<string>();
  for (const field of CONFIG_FIELDS as readonly ConfigField[]) {
    if (field.path.startsWith(prefix)) keys.add(field.path.slice(prefix.length).split('.')[0]!);
  }
  if (prefix === '') {
    for (const key of FILE_GLOB_KEYS) keys.add(key);
    keys.add('$schema'); // lets editors attach the JSON schema; carries no setting
  }
  return keys;
}

function lookup(obj: Record<string, unknown>, path: string): unknown {
  let value: unknown = obj;
  for (const part of path.split('.')) {
    if (!isPlainObject(value)) return undefined;
    value = (value as Record<string, unknown>)[part];
  }
  return value;
}

/** JSON.parse with the syntax error's line and column in the message. */
function parseJsonText(text: string, label: string, file: string): unknown {
  try {
    return JSON.parse(text.charCodeAt(0) === 0xfeff ? text.slice(1) : text);
  } catch (err) {
    const message = err instanceof Error ? err.message : String(err);
    const at = /at position (\d+)/.exec(message);
    let where = '';
    if (at) {
      const before = text.slice(0, Number(at[1]));
      const line = before.split('\n').length;
      const column = before.length - before.lastIndexOf('\n');
      where = `:${line}:${column}`;
    }
    const reason = message.replace(/\s*in JSON at position \d+.*$/, '').replace(/^Unexpected end of JSON input$/, 'unexpected end of file');
    throw new ConfigError(`${label}${where}: not valid JSON (${reason})`, { file });
  }
}

/** A path for messages: relative to the current folder when inside it, else absolute. */
function displayPath(abs: string): string {
  return relativeInside(process.cwd(), abs) ?? abs;
}

function isPlainObject(value: unknown): boolean {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}
