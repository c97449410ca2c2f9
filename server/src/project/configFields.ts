// The keys of `gradient-probe.json` that carry check settings: one row per key with the
// CheckSettings field it sets, its rule and its description. Defaults stay in engine/settings.ts.

import type { CheckSettings } from '../engine/settings';

/** One settings key of the configuration file. */
export interface ConfigField {
  /** Dotted key in the file ("tolerance.f64"). */
  path: string;
  /** The CheckSettings field it sets. */
  setting: keyof CheckSettings;
  /** JSON schema type of the value. */
  type: 'integer' | 'number';
  minimum: number;
  /** Bounds that are exclusive (for tolerances). */
  exclusiveMinimum?: boolean;
  maximum: number;
  exclusiveMaximum?: boolean;
  description: string;
  /** undefined when the value is valid, else what was expected. */
  check: (value: unknown) => string | undefined;
}

/** Keys that hold file globs rather than check settings. */
export const FILE_GLOB_KEYS = ['include', 'exclude'] as const;

/**
 * Largest timer delay Node accepts: setTimeout stores delays as a signed 32-bit integer and
 * fires at once above it (Node.js docs, timers).
 */
const MAX_TIMER_MS = 2 ** 31 - 1;
/**
 * Smallest runner heap accepted, MiB: Node 20 starts and runs a script with
 * `--max-old-space-size=16` (measured on this project's machine); less is not useful.
 */
const MIN_MEMORY_MB = 16;

function integerField(path: string, setting: keyof CheckSettings, minimum: number, maximum: number, description: string): ConfigField {
  const range = maximum === Number.MAX_SAFE_INTEGER ? `an integer of at least ${minimum}` : `an integer from ${minimum} to ${maximum}`;
  return {
    path,
    setting,
    type: 'integer',
    minimum,
    maximum,
    description,
    check: (v) => (typeof v === 'number' && Number.isSafeInteger(v) && v >= minimum && v <= maximum ? undefined : range),
  };
}

function toleranceField(path: string, setting: keyof CheckSettings, description: string): ConfigField {
  return {
    path,
    setting,
    type: 'number',
    minimum: 0,
    exclusiveMinimum: true,
    maximum: 1,
    exclusiveMaximum: true,
    description,
    // A relative tolerance of 1 or more accepts any gradient, so it is refused.
    check: (v) => (typeof v === 'number' && Number.isFinite(v) && v > 0 && v < 1 ? undefined : 'a positive number below 1'),
  };
}

export const CONFIG_FIELDS: readonly ConfigField[] = [
  integerField('seed', 'seed', 0, Number.MAX_SAFE_INTEGER, "Seed of the input generator; an op's @seed tag wins."),
  toleranceField('tolerance.f64', 'toleranceF64', "Relative tolerance for float64 and plain-number ops; an op's @tolerance tag wins."),
  toleranceField('tolerance.f32', 'toleranceF32', "Relative tolerance for float32 ops; an op's @tolerance tag wins."),
  integerField('timeLimitMs', 'timeLimitMs', 1, MAX_TIMER_MS, "Wall-clock limit of one op's whole check, in milliseconds."),
  integerField('memoryLimitMb', 'memoryLimitMb', MIN_MEMORY_MB, Number.MAX_SAFE_INTEGER, 'Memory limit of the runner process, in MiB.'),
  integerField(
    'largeParamElements',
    'largeParamElements',
    1,
    Number.MAX_SAFE_INTEGER,
    'Parameters with more elements than this get the dot-product test plus a subset of full columns.',
  ),
  integerField('upstreamProbes', 'upstreamProbes', 1, Number.MAX_SAFE_INTEGER, 'Random upstream gradients per op (one backward call each).'),
  integerField('dotProductProbes', 'dotProductProbes', 1, Number.MAX_SAFE_INTEGER, 'Dot-product probes per large parameter.'),
  integerField('subsetElements', 'subsetElements', 0, Number.MAX_SAFE_INTEGER, 'Elements of a large parameter also checked one by one.'),
  integerField('kinkResamples', 'kinkResamples', 0, Number.MAX_SAFE_INTEGER, 'How often a sample with a kink is redrawn before the op is called inconclusive.'),
  integerField('maxElements', 'maxElements', 1, Number.MAX_SAFE_INTEGER, 'Largest output or input, in elements, that an op may produce.'),
];

/** The row that sets one CheckSettings field. */
export function fieldForSetting(key: keyof CheckSettings): ConfigField | undefined {
  return CONFIG_FIELDS.find((f) => f.setting === key);
}

/** A value as it appears in messages: JSON where possible, so strings keep their quotes. */
export function describeValue(value: unknown): string {
  if (value === undefined) return 'nothing';
  if (typeof value === 'number' && !Number.isFinite(value)) return String(value);
  if (Array.isArray(value)) return value.length === 0 ? 'an empty array' : 'an array';
  if (value === null) return 'null';
  if (typeof value === 'object') return 'an object';
  const text = JSON.stringify(value);
  return text.length > 60 ? `${text.slice(0, 57)}..."` : text;
}
