// The project configuration file `gradient-probe.json`: finding it, validating it field by
// field, and merging it over DEFAULT_SETTINGS. The CLI and the language server both read it here.

import { existsSync, readFileSync, statSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { DEFAULT_SETTINGS, type CheckSettings } from '../engine/settings';
import { CONFIG_FIELDS, FILE_GLOB_KEYS, describeValue, fieldForSetting, type ConfigField } from './configFields';
import { nearestName } from '../text/nearestName';
import { blankJsoncExtras } from './jsonc';
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

/** One problem of a configuration: its message (without the source) and the dotted field. */
export interface ConfigProblem {
  message: string;
  field?: string;
}

/**
 * A bad configuration value or file. The message has one line per problem, each starting with
 * the source (the file); `field` is the first problem's dotted key ("tolerance.f64").
 */
export class ConfigError extends Error {
  field?: string;
  file?: string;
  /** Every problem found, in file order; the message lists them all. */
  problems: ConfigProblem[];
  constructor(message: string, details: { field?: string; file?: string; problems?: ConfigProblem[] } = {}) {
    super(message);
    this.name = 'ConfigError';
    if (details.field !== undefined) this.field = details.field;
    if (details.file !== undefined) this.file = details.file;
    this.problems = details.problems ?? [{ message, ...(details.field !== undefined ? { field: details.field } : {}) }];
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
 * settings) in the file's shape and returns them normalised. A nested key may also be written
 * dotted (`"tolerance.f64": 1e-7` means `"tolerance": { "f64": 1e-7 }`). Throws one ConfigError
 * listing every problem, each line starting with `source` and naming the dotted field.
 */
export function readConfigValues(raw: unknown, source: string, file?: string): ConfigValues {
  const problems: ConfigProblem[] = [];
  const report = (message: string, field?: string): void => {
    problems.push(field !== undefined ? { message, field } : { message });
  };
  const values: ConfigValues = { settings: {} };
  if (!isPlainObject(raw)) {
    report(`must hold a JSON object, got ${describeValue(raw)}`);
  } else {
    const obj = raw as Record<string, unknown>;
    checkKeys(obj, '', report);
    for (const field of CONFIG_FIELDS) {
      const nested = lookup(obj, field.path);
      const dotted = field.path.includes('.') ? obj[field.path] : undefined;
      if (nested !== undefined && dotted !== undefined) {
        report(`"${field.path}" is given twice (nested and dotted); keep one`, field.path);
        continue;
      }
      const value = nested !== undefined ? nested : dotted;
      if (value === undefined) continue;
      const expected = field.check(value);
      if (expected !== undefined) {
        report(`"${field.path}" must be ${expected}, got ${describeValue(value)}`, field.path);
        continue;
      }
      (values.settings as Record<string, unknown>)[field.setting] = value;
    }
    for (const key of FILE_GLOB_KEYS) {
      const value = obj[key];
      if (value === undefined) continue;
      if (!Array.isArray(value)) {
        report(`"${key}" must be an array of glob strings, got ${describeValue(value)}`, key);
        continue;
      }
      const globs = value as unknown[];
      let ok = true;
      globs.forEach((glob, i) => {
        if (typeof glob !== 'string' || glob.trim() === '') {
          report(`"${key}[${i}]" must be a non-empty glob string, got ${describeValue(glob)}`, `${key}[${i}]`);
          ok = false;
        }
      });
      if (ok) values[key] = (globs as string[]).map((g) => g.trim());
    }
  }
  if (problems.length > 0) {
    const details: { field?: string; file?: string; problems: ConfigProblem[] } = { problems };
    if (problems[0]!.field !== undefined) details.field = problems[0]!.field;
    if (file !== undefined) details.file = file;
    throw new ConfigError(problems.map((p) => `${source}: ${p.message}`).join('\n'), details);
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
 * Finds `gradient-probe.json` in `dir` or its parents (stopping after a folder that holds
 * package.json or `.git`, or at the filesystem root), validates it, and merges
 * DEFAULT_SETTINGS ← file ← overrides.
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

/**
 * The configuration file that applies to `dir`, or undefined. The search goes upwards and stops
 * after the nearest package root (a folder with package.json) or repository root (with .git).
 */
export function findConfigFile(dir: string): string | undefined {
  let current = resolve(dir);
  for (;;) {
    const candidate = join(current, CONFIG_FILE_NAME);
    if (existsSync(candidate)) return candidate;
    // A package or repository root bounds the search: a file above it belongs to something else.
    if (existsSync(join(current, 'package.json')) || existsSync(join(current, '.git'))) return undefined;
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

/** Reports keys the file format does not know, with a "did you mean" when one is close. */
function checkKeys(obj: Record<string, unknown>, prefix: string, report: (message: string, field?: string) => void): void {
  const known = knownKeysUnder(prefix);
  for (const key of Object.keys(obj)) {
    const path = prefix + key;
    if (!known.has(key)) {
      const guess = nearestName(key, [...known]);
      report(`unknown key "${path}"${guess ? ` (did you mean "${prefix}${guess}"?)` : ''}`, path);
      continue;
    }
    const isGroup = CONFIG_FIELDS.some((f) => f.path.startsWith(path + '.'));
    if (isGroup) {
      const value = obj[key];
      if (!isPlainObject(value)) {
        const members = CONFIG_FIELDS.filter((f) => f.path.startsWith(path + '.')).map((f) => f.path.slice(path.length + 1));
        report(`"${path}" must be an object with keys ${members.map((m) => `"${m}"`).join(', ')}, got ${describeValue(value)}`, path);
        continue;
      }
      checkKeys(value as Record<string, unknown>, path + '.', report);
    }
  }
}

function knownKeysUnder(prefix: string): Set<string> {
  const keys = new Set<string>();
  for (const field of CONFIG_FIELDS as readonly ConfigField[]) {
    if (field.path.startsWith(prefix)) keys.add(field.path.slice(prefix.length).split('.')[0]!);
    // The dotted spelling of a nested key ("tolerance.f64") is accepted at the top level too.
    if (prefix === '' && field.path.includes('.')) keys.add(field.path);
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

/**
 * The text of a configuration file parsed as JSON with comments and trailing commas (as editors
 * write settings files); throws ConfigError with the syntax error's line and column.
 */
export function parseConfigText(text: string, label: string, file: string): unknown {
  return parseJsonText(text, label, file);
}

function parseJsonText(text: string, label: string, file: string): unknown {
  try {
    return JSON.parse(blankJsoncExtras(text.charCodeAt(0) === 0xfeff ? text.slice(1) : text));
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
