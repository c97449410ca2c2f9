// Finds the built files the sandbox needs (dist/sandbox-child.js, dist/isolated-worker.js,
// dist/engine-in-sandbox.js) whether the caller runs from dist/cli.js, dist/server.js or
// dist/test/<area>/x.test.js, and reads the engine's code once for both kinds of runner.
import { existsSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';

/** Names of the built assets. */
export const CHILD_SCRIPT_NAME = 'sandbox-child.js';
export const ENGINE_SCRIPT_NAME = 'engine-in-sandbox.js';
export const ISOLATED_WORKER_SCRIPT_NAME = 'isolated-worker.js';

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

/** A built script's path (the caller's choice, else found next to dist/), or why there is none. */
export function locateScript(name: string, what: string, chosen?: string): { path: string } | { error: string } {
  const path = chosen ?? findBuiltAsset(name);
  return path ? { path } : { error: `${what} ${name} was not found next to dist/ (run npm run build)` };
}

/** Reads the engine's built code on first success and keeps it; a message when it is missing or unreadable (never throws). */
export class EngineCode {
  private code: string | undefined;

  constructor(private readonly chosenPath?: string) {}

  load(): { code: string } | { error: string } {
    if (this.code !== undefined) return { code: this.code };
    const found = locateScript(ENGINE_SCRIPT_NAME, 'the check engine', this.chosenPath);
    if ('error' in found) return found;
    try {
      this.code = readFileSync(found.path, 'utf8');
      return { code: this.code };
    } catch (e) {
      return { error: `the check engine could not be read: ${(e as Error).message}` };
    }
  }
}
