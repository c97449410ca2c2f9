// A JSON schema (draft-07) of `gradient-probe.json`, built from the same field table that the
// reader validates with, so editors can offer completion and a test can compare it with the
// editor's settings schema.

import { DEFAULT_SETTINGS } from '../engine/settings';
import { CONFIG_FIELDS, type ConfigField } from './configFields';
import { DEFAULT_FILE_GLOBS } from './config';

type JsonSchema = { [key: string]: unknown };

function fieldSchema(field: ConfigField): JsonSchema {
  const schema: JsonSchema = { type: field.type, description: field.description, default: DEFAULT_SETTINGS[field.setting] };
  if (field.exclusiveMinimum) schema['exclusiveMinimum'] = field.minimum;
  else schema['minimum'] = field.minimum;
  if (field.exclusiveMaximum) schema['exclusiveMaximum'] = field.maximum;
  else if (field.maximum !== Number.MAX_SAFE_INTEGER) schema['maximum'] = field.maximum;
  return schema;
}

function globList(description: string, defaults: readonly string[]): JsonSchema {
  return { type: 'array', description, items: { type: 'string', minLength: 1 }, default: [...defaults] };
}

/** Builds the schema; nested keys ("tolerance.f64") become nested objects, and are also accepted dotted. */
export function projectConfigSchema(): JsonSchema {
  const properties: Record<string, JsonSchema> = {
    $schema: { type: 'string', description: 'Where editors find this schema; ignored by the checker.' },
  };
  const dotted: Record<string, JsonSchema> = {};
  for (const field of CONFIG_FIELDS) {
    const parts = field.path.split('.');
    if (parts.length === 1) {
      properties[field.path] = fieldSchema(field);
      continue;
    }
    const [group, key] = parts as [string, string];
    const groupSchema = (properties[group] ??= { type: 'object', additionalProperties: false, properties: {} });
    (groupSchema['properties'] as Record<string, JsonSchema>)[key] = fieldSchema(field);
    // The reader accepts the dotted spelling too ("tolerance.f64": 1e-7), so editors must not flag it.
    dotted[field.path] = { ...fieldSchema(field), description: `${field.description} (Dotted spelling of "${group}": { "${key}": … }.)` };
  }
  Object.assign(properties, dotted);
  properties['include'] = globList("Globs, relative to this file's folder, that a source file must match; empty means every TypeScript source.", DEFAULT_FILE_GLOBS.include);
  properties['exclude'] = globList("Globs, relative to this file's folder, of source files to leave out.", DEFAULT_FILE_GLOBS.exclude);
  return {
    $schema: 'http://json-schema.org/draft-07/schema#',
    title: 'Gradient Probe project configuration (gradient-probe.json)',
    type: 'object',
    additionalProperties: false,
    properties,
  };
}
