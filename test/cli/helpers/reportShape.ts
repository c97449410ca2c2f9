// A check of the version-1 JSON report: the published schema (docs/report.schema.json) through a
// general-purpose validator from npm (ajv), plus what a JSON Schema cannot state (the summary
// agreeing with the pairs, paths relative with "/"). Returns violations, [] when it conforms.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import Ajv from 'ajv';
import { ROOT } from '../../helpers/cli';

const VERDICTS = ['pass', 'mismatch', 'inconclusive', 'error'];

const schema = JSON.parse(readFileSync(join(ROOT, 'docs', 'report.schema.json'), 'utf8')) as object;
const validate = new Ajv({ allErrors: true, strict: true }).compile(schema);

type Obj = Record<string, unknown>;

function isObj(v: unknown): v is Obj {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

/** Where `report` departs from docs/report.schema.json, one line per error. */
export function schemaViolations(report: unknown): string[] {
  if (validate(report)) return [];
  return (validate.errors ?? []).map((e) => `${e.instancePath || '(report)'} ${e.message ?? 'is invalid'}`);
}

/** Every way `report` departs from the v1 report; [] when it conforms. */
export function reportViolations(report: unknown): string[] {
  const out = schemaViolations(report);
  if (!isObj(report) || !Array.isArray(report['pairs'])) return out;
  const counted: Record<string, number> = { pass: 0, mismatch: 0, inconclusive: 0, error: 0 };
  report['pairs'].forEach((pair: unknown, i) => {
    if (!isObj(pair)) return;
    const file = pair['file'];
    if (typeof file === 'string') {
      if (file.includes('\\')) out.push(`/pairs/${i}/file must use "/" separators: ${file}`);
      if (file.startsWith('/') || /^[A-Za-z]:/.test(file)) out.push(`/pairs/${i}/file must be relative: ${file}`);
    }
    const verdict = pair['verdict'];
    if (typeof verdict === 'string' && VERDICTS.includes(verdict)) counted[verdict]! += 1;
  });
  const summary = report['summary'];
  if (isObj(summary)) {
    for (const v of VERDICTS) {
      if (typeof summary[v] === 'number' && summary[v] !== counted[v]) out.push(`/summary/${v} is ${String(summary[v])} but ${counted[v]} pairs have that verdict`);
    }
  }
  return out;
}
