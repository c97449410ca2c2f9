// Bundles kept on disk between runs, so a second run over an unchanged file that imports a
// large package does not pay esbuild again. One JSON file per bundle request, keyed by the
// request (file, text, exposed names) and the tool's version; inputs are re-validated on use.
import { createHash } from 'node:crypto';
import { existsSync, mkdirSync, readdirSync, readFileSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir, userInfo } from 'node:os';
import { dirname, join } from 'node:path';
import * as esbuild from 'esbuild';
import type { CacheEntry } from './bundleBuild';

/**
 * Environment variable naming the cache folder, or `off` to keep bundles in memory only. Default:
 * `gradient-probe-UID/bundles` in the OS temporary folder, used only while that folder belongs to
 * the current user and nobody else may write to it. Not inside the project: a bundle planted in
 * a repository (a committed `node_modules/.cache`) could make a check run other code than the
 * source shows, and a pass must mean the source passed.
 */
export const BUNDLE_CACHE_ENV = 'GRADIENT_PROBE_BUNDLE_CACHE';

/** Bundle files and bytes kept per cache folder; the oldest go first (our choice: a few projects' worth). */
const MAX_FILES = 200;
const MAX_BYTES = 512 * 1024 * 1024;

/** What a cached bundle records (the in-memory cache entry, as JSON). */
export type StoredBundle = CacheEntry;

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

/** The default cache folder (its parent is checked for ownership before use). */
export function defaultBundleCacheDir(): string {
  let who = 'user';
  try {
    who = typeof process.getuid === 'function' ? String(process.getuid()) : userInfo().username.replace(/[^A-Za-z0-9_-]/g, '_') || who;
  } catch {
    // no user id or name: the ownership check below still applies
  }
  return join(tmpdir(), `gradient-probe-${who}`, 'bundles');
}

/**
 * Whether a folder in a shared temporary directory is ours alone: created now with mode 0700,
 * or already there, owned by this user and not writable by group or others (POSIX; on Windows
 * the per-user temporary folder is private already).
 */
function privateFolder(dir: string): boolean {
  try {
    mkdirSync(dir, { recursive: true, mode: 0o700 });
    if (typeof process.getuid !== 'function') return true;
    const st = statSync(dir);
    return st.uid === process.getuid() && (st.mode & 0o022) === 0;
  } catch {
    return false;
  }
}

/** The cache folder, or undefined when disk caching is off (or the default folder is not safe). */
export function bundleCacheDir(): string | undefined {
  const fromEnv = process.env[BUNDLE_CACHE_ENV];
  if (fromEnv === 'off') return undefined;
  if (fromEnv) return fromEnv;
  const dir = defaultBundleCacheDir();
  return privateFolder(dirname(dir)) ? dir : undefined;
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
