// Shared by the sandbox tests: where the fixtures are, settings for short limits, and small
// lookups over results.
import { existsSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { DEFAULT_SETTINGS, type CheckSettings } from '../../server/src/engine/settings';
import type { OpResult } from '../../server/src/model/types';

/** test/fixtures/sandbox, found from the bundled test's folder (dist/test/sandbox) or the current folder. */
export function fixturesDir(): string {
  for (const start of [__dirname, process.cwd()]) {
    let dir = start;
    for (;;) {
      const candidate = join(dir, 'test', 'fixtures', 'sandbox');
      if (existsSync(candidate)) return candidate;
      const parent = dirname(dir);
      if (parent === dir) break;
      dir = parent;
    }
  }
  throw new Error('test/fixtures/sandbox not found');
}

export function fixture(...parts: string[]): string {
  return join(fixturesDir(), ...parts);
}

export function settingsWith(overrides: Partial<CheckSettings>): CheckSettings {
  return { ...DEFAULT_SETTINGS, ...overrides };
}

/** The result of the op with this forward name; fails the test with the names present if missing. */
export function resultOf(results: OpResult[], forward: string): OpResult {
  const r = results.find((x) => x.forward === forward);
  if (!r) throw new Error(`no result for ${forward}; got ${results.map((x) => x.forward).join(', ')}`);
  return r;
}

/** One line per result, for assertion messages. */
export function describeResults(results: OpResult[]): string {
  return results.map((r) => `${r.forward}: ${r.verdict} — ${r.message}`).join('\n');
}
