// Bundles kept on disk between runs, so a second run over an unchanged file that imports a
// large package does not pay esbuild again. One JSON file per bundle request, keyed by the
// request (file, text, exposed names) and the tool's version; inputs are re-validated on use.
import { createHash } from 'node:crypto';
import { existsSync, mkdirSync, readdirSync, readFileSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir, userInfo } from 'node:os';
import { dirname, join } from 'node:path';
import * as esbuild from 'esbuild';

/**
 * Environment variable naming the cache folder, or `off` to keep bundles in memory only. Default:
 * `node_modules/.cache/gradient-probe/bundles` in the nearest folder above the file that has a
 * `node_modules`, else `gradient-probe-USER/bundles` in the OS temporary folder.
 */
export const BUNDLE_CACHE_ENV = 'GRADIENT_PROBE_BUNDLE_CACHE';

/** Bundle files and bytes kept per cache folder; the oldest go first (our choice: a few projects' worth). */
const MAX_FILES = 200;
const MAX_BYTES = 512 * 1024 * 1024;

/** What a cached bundle records (the in-memory cache entry, as JSON). */
export interface StoredBundle {
  code: string;
  key: string;
  sourceMap: string;
  mapDir: string;
  inputs: { path: string; size: number; mtimeMs: number; hash: string }[];
}

/** The tool's version and esbuild's: a bundle made by another version is not reused. */
function toolVersion(): string {
  let own = 'unknown';
  for (let dir = __dirname; ; dir = dirname(dir)) {
    const pkg = join(dir, 'package.json');
    if (existsSync(pkg)) {
      try {
        const parsed = JSON.parse(readFileSync(pkg, 'utf8')) as { name?: string; version?: string };
        if (parsed.name === 'gradient-probe') {
          own = parsed.version ?? own;
          break;
        }
      } catch {
        // not ours; keep looking
      }
    }
    if (dirname(dir) === dir) break;
  }
  return `${own}+esbuild-${esbuild.version}`;
}

const VERSION = toolVersion();

/** The cache folder for a source file, or undefined when disk caching is off. */
export function bundleCacheDir(file: string): string | undefined {
  const fromEnv = process.env[BUNDLE_CACHE_ENV];
  if (fromEnv === 'off') return undefined;
  if (fromEnv) return fromEnv;
  for (let dir = dirname(file); ; dir = dirname(dir)) {
    if (existsSync(join(dir, 'node_modules'))) return join(dir, 'node_modules', '.cache', 'gradient-probe', 'bundles');
    if (dirname(dir) === dir) break;
  }
  let user = 'user';
  try {
    user = userInfo().username.replace(/[^A-Za-z0-9_-]/g, '_') || user;
  } catch {
    // no user name: the shared name is fine, entries are re-validated anyway
  }
  return join(tmpdir(), `gradient-probe-${user}`, 'bundles');
}

function entryPath(dir: string, requestKey: string): string {
  return join(dir, `${createHash('sha256').update(VERSION).update('\0').update(requestKey).digest('hex').slice(0, 40)}.json`);
}

/** The stored bundle of a request, or undefined (missing, unreadable, another version). */
export function readStoredBundle(dir: string, requestKey: string): StoredBundle | undefined {
  try {
    const parsed = JSON.parse(readFileSync(entryPath(dir, requestKey), 'utf8')) as StoredBundle & { version?: string; requestKey?: string };
    if (parsed.version !== VERSION || parsed.requestKey !== requestKey || typeof parsed.code !== 'string' || !Array.isArray(parsed.inputs)) return undefined;
    return { code: parsed.code, key: parsed.key, sourceMap: parsed.sourceMap, mapDir: parsed.mapDir, inputs: parsed.inputs };
  } catch {
    return undefined;
  }
}

/** Stores a bundle (write to a temporary name, then rename, so a reader never sees half a file); never throws. */
export function writeStoredBundle(dir: string, requestKey: string, bundle: StoredBundle): void {
  try {
    mkdirSync(dir, { recursive: true, mode: 0o700 });
    const path = entryPath(dir, requestKey);
    const temp = `${path}.${process.pid}.tmp`;
    writeFileSync(temp, JSON.stringify({ version: VERSION, requestKey, ...bundle }));
    renameSync(temp, path);
    prune(dir);
  } catch {
    // A read-only or full disk: the memory cache still serves this run.
  }
}

function prune(dir: string): void {
  const aged = readdirSync(dir)
    .filter((n) => n.endsWith('.json'))
    .map((n) => {
      const st = statSync(join(dir, n));
      return { n, t: st.mtimeMs, size: st.size };
    })
    .sort((a, b) => a.t - b.t);
  let bytes = aged.reduce((sum, e) => sum + e.size, 0);
  let count = aged.length;
  for (const e of aged) {
    if (count <= MAX_FILES && bytes <= MAX_BYTES) break;
    rmSync(join(dir, e.n), { force: true });
    count--;
    bytes -= e.size;
  }
}
