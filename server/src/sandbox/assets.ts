// Finds the built files the sandbox needs (dist/sandbox-child.js, dist/engine-in-sandbox.js)
// whether the caller runs from dist/cli.js, dist/server.js or dist/test/<area>/x.test.js.
import { existsSync } from 'node:fs';
import { dirname, join } from 'node:path';

/** Names of the built assets. */
export const CHILD_SCRIPT_NAME = 'sandbox-child.js';
export const ENGINE_SCRIPT_NAME = 'engine-in-sandbox.js';

/**
 * Walks up from `__dirname` (then from the current folder) until `<dir>/<name>` or
 * `<dir>/dist/<name>` exists. Returns undefined when neither start finds it.
 */
export function findBuiltAsset(name: string, starts: string[] = [__dirname, process.cwd()]): string | undefined {
  for (const start of starts) {
    let dir = start;
    for (;;) {
      for (const candidate of [join(dir, name), join(dir, 'dist', name)]) {
        if (existsSync(candidate)) return candidate;
      }
      const parent = dirname(dir);
      if (parent === dir) break;
      dir = parent;
    }
  }
  return undefined;
}
