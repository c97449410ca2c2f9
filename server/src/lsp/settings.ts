// The editor's settings (`gradientProbe.*`): one typed object, one reader that normalises raw
// values, and the merge with the project file, which wins wherever it speaks so that the editor
// and CI agree. Cached per document URI; the cache is cleared when either source changes.

import { readFileSync } from 'node:fs';
import { DEFAULT_SETTINGS, type CheckSettings } from '../engine/settings';
import { ConfigError, DEFAULT_FILE_GLOBS, findConfigFile, loadConfigFile, parseConfigText, readConfigValues, type ConfigValues } from '../project/config';

/** When the server checks a document by itself (commands and lenses always work). */
export type CheckWhen = 'open-and-save' | 'while-typing' | 'on-command';
export const CHECK_WHEN_VALUES: readonly CheckWhen[] = ['open-and-save', 'while-typing', 'on-command'];

/** Settings that only the editor has; the check settings themselves are the project file's keys. */
export interface EditorOnlySettings {
  checkWhen: CheckWhen;
  /** Pause after the last keystroke before a `while-typing` check starts, in milliseconds. */
  typingPauseMs: number;
  /**
   * In an untrusted workspace, check ops in the isolated interpreter (WebAssembly, no Node API,
   * slower) instead of running nothing. A user-level opt-in: the workspace cannot set it.
   */
  isolatedWhenUntrusted: boolean;
  /** Record coverage and mark code of a checked backward that its check never ran, as hint-level diagnostics; off: no coverage run. */
  showUnreached: boolean;
}

export const EDITOR_ONLY_DEFAULTS: EditorOnlySettings = {
  checkWhen: 'open-and-save',
  // Long enough that a check does not start between two words at ordinary typing speed
  // (common practice for "after typing stops" features, not from a handbook).
  typingPauseMs: 800,
  isolatedWhenUntrusted: false,
  showUnreached: true,
};

/** The editor-only keys, as they appear under `gradientProbe.`. */
export const EDITOR_ONLY_KEYS = ['checkWhen', 'typingPauseMs', 'isolatedWhenUntrusted', 'showUnreached'] as const;

/** Bounds of `typingPauseMs`: below 100 ms a check would start mid-word; 60 s is plenty. */
export const TYPING_PAUSE_RANGE = { minimum: 100, maximum: 60_000 } as const;

/**
 * The check settings the editor exposes, as dotted keys of the project file's shape under the
 * `gradientProbe.` prefix. The manifest schema test walks this list.
 */
export const EDITOR_CHECK_KEYS = ['seed', 'tolerance.f64', 'tolerance.f32', 'timeLimitMs', 'memoryLimitMb', 'largeParamElements', 'include', 'exclude'] as const;

/** The user's settings after normalising: editor-only ones plus validated check values. */
export interface EditorSettings extends EditorOnlySettings {
  values: ConfigValues;
  /** One line per value that was ignored because it is invalid. */
  problems: string[];
}

/** What a document is checked with. */
export interface EffectiveSettings extends EditorOnlySettings {
  settings: CheckSettings;
  include: string[];
  exclude: string[];
  /** The project file that applied, if any. */
  configFile?: string;
  /** A broken project file: nothing runs until it is fixed (as the CLI exits 2). */
  configError?: { message: string; file?: string };
  /** Invalid user settings that were ignored. */
  problems: string[];
}

/** Reads the raw `gradientProbe` section as the editor returns it; never throws. */
export function readEditorSettings(raw: unknown): EditorSettings {
  const section = isObject(raw) ? raw : {};
  const problems: string[] = [];
  let checkWhen = EDITOR_ONLY_DEFAULTS.checkWhen;
  if (section.checkWhen !== undefined) {
    if (typeof section.checkWhen === 'string' && (CHECK_WHEN_VALUES as readonly string[]).includes(section.checkWhen)) {
      checkWhen = section.checkWhen as CheckWhen;
    } else {
      problems.push(`gradientProbe.checkWhen must be one of ${CHECK_WHEN_VALUES.join(', ')}; using ${checkWhen}`);
    }
  }
  let typingPauseMs = EDITOR_ONLY_DEFAULTS.typingPauseMs;
  const pause = section.typingPauseMs;
  if (pause !== undefined) {
    if (typeof pause === 'number' && Number.isInteger(pause) && pause >= TYPING_PAUSE_RANGE.minimum && pause <= TYPING_PAUSE_RANGE.maximum) {
      typingPauseMs = pause;
    } else {
      problems.push(`gradientProbe.typingPauseMs must be an integer from ${TYPING_PAUSE_RANGE.minimum} to ${TYPING_PAUSE_RANGE.maximum}; using ${typingPauseMs}`);
    }
  }
  let isolatedWhenUntrusted = EDITOR_ONLY_DEFAULTS.isolatedWhenUntrusted;
  if (section.isolatedWhenUntrusted !== undefined) {
    if (typeof section.isolatedWhenUntrusted === 'boolean') isolatedWhenUntrusted = section.isolatedWhenUntrusted;
    else problems.push(`gradientProbe.isolatedWhenUntrusted must be true or false; using ${isolatedWhenUntrusted}`);
  }
  let showUnreached = EDITOR_ONLY_DEFAULTS.showUnreached;
  if (section.showUnreached !== undefined) {
    if (typeof section.showUnreached === 'boolean') showUnreached = section.showUnreached;
    else problems.push(`gradientProbe.showUnreached must be true or false; using ${showUnreached}`);
  }
  // Each check key is validated alone by the project's own reader, so one bad value drops
  // only itself and the message names it.
  const values: ConfigValues = { settings: {} };
  for (const key of EDITOR_CHECK_KEYS) {
    const value = lookup(section, key);
    if (value === undefined || value === null) continue;
    try {
      const one = readConfigValues(nest(key, value), 'settings');
      Object.assign(values.settings, one.settings);
      if (one.include) values.include = one.include;
      if (one.exclude) values.exclude = one.exclude;
    } catch (err) {
      // The problems themselves, without the source label the error's message puts before each.
      const detail = err instanceof ConfigError ? err.problems.map((p) => p.message).join('; ') : err instanceof Error ? err.message : String(err);
      problems.push(`user setting gradientProbe.${key} ignored: ${detail}`);
    }
  }
  return { checkWhen, typingPauseMs, isolatedWhenUntrusted, showUnreached, values, problems };
}

/**
 * DEFAULT_SETTINGS ← user settings ← project file (`gradient-probe.json` nearest to `dir`).
 * A broken project file is reported, not thrown.
 */
export function resolveEffectiveSettings(editor: EditorSettings, dir: string): EffectiveSettings {
  const base: EffectiveSettings = {
    checkWhen: editor.checkWhen,
    typingPauseMs: editor.typingPauseMs,
    isolatedWhenUntrusted: editor.isolatedWhenUntrusted,
    showUnreached: editor.showUnreached,
    settings: { ...DEFAULT_SETTINGS, ...editor.values.settings },
    include: editor.values.include ?? [...DEFAULT_FILE_GLOBS.include],
    exclude: editor.values.exclude ?? [...DEFAULT_FILE_GLOBS.exclude],
    problems: editor.problems,
  };
  let file: string | undefined;
  try {
    file = findConfigFile(dir);
    if (file === undefined) return base;
    // loadConfigFile gives the CLI's exact messages for a broken file; the second read below
    // learns which keys the file sets, so user settings fill in only where it is silent.
    loadConfigFile(file);
    const fileValues = readConfigValues(parseConfigText(readFileSync(file, 'utf8'), file, file), file, file);
    return {
      ...base,
      settings: { ...base.settings, ...fileValues.settings },
      include: fileValues.include ?? base.include,
      exclude: fileValues.exclude ?? base.exclude,
      configFile: file,
    };
  } catch (err) {
    const message = err instanceof Error ? err.message : String(err);
    const errorFile = err instanceof ConfigError && err.file !== undefined ? err.file : file;
    return { ...base, ...(errorFile !== undefined ? { configFile: errorFile } : {}), configError: { message, ...(errorFile !== undefined ? { file: errorFile } : {}) } };
  }
}

/** Settings per document URI, fetched once and kept until `clear()` (a change of either source). */
export class SettingsCache {
  private readonly byUri = new Map<string, Promise<EffectiveSettings>>();

  constructor(
    /** Asks the client for the raw `gradientProbe` section scoped to a URI. */
    private readonly fetchSection: (uri: string) => Promise<unknown>,
  ) {}

  /** `dir` is where the project file search starts: the document's folder, or a workspace folder. */
  get(uri: string, dir: string): Promise<EffectiveSettings> {
    let entry = this.byUri.get(uri);
    if (!entry) {
      entry = this.fetchSection(uri)
        .catch(() => ({})) // a client without workspace/configuration: defaults
        .then((raw) => resolveEffectiveSettings(readEditorSettings(raw), dir));
      this.byUri.set(uri, entry);
    }
    return entry;
  }

  clear(): void {
    this.byUri.clear();
  }
}

/** The same settings give the same key: results computed with them can be reused. */
export function settingsKey(settings: CheckSettings): string {
  return JSON.stringify(
    Object.keys(settings)
      .sort()
      .map((k) => [k, settings[k as keyof CheckSettings]]),
  );
}

function lookup(obj: Record<string, unknown>, dotted: string): unknown {
  // VS Code returns dotted keys nested ("tolerance": { "f64": … }); a hand-written client
  // may send them flat ("tolerance.f64"). Accept both.
  if (dotted in obj) return obj[dotted];
  let value: unknown = obj;
  for (const part of dotted.split('.')) {
    if (!isObject(value)) return undefined;
    value = value[part];
  }
  return value;
}

function nest(dotted: string, value: unknown): Record<string, unknown> {
  const parts = dotted.split('.');
  let out: unknown = value;
  for (let i = parts.length - 1; i >= 0; i--) out = { [parts[i]!]: out };
  return out as Record<string, unknown>;
}

function isObject(value: unknown): value is Record<string, unknown> {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}
