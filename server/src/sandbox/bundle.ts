// Bundles one source file (the editor's unsaved text, or the file on disk) with its relative
// imports and packages into one script for the sandbox, in memory, with esbuild; appends code
// that exposes the ops' bindings (exported or not); caches bundles by the content of every input.
// The esbuild run itself is bundleBuild.ts.
import { readFileSync, statSync } from 'node:fs';
import { resolve } from 'node:path';
import { buildBundle, sha256, type CacheEntry } from './bundleBuild';
import { bundleCacheDir, readStoredBundle, writeStoredBundle } from './bundleDiskCache';
import { IDENTIFIER } from './exposeCode';
import { mappedSegments, originalPlace, type MappedSegment, type SourcePlace } from './sourceMap';

/** Bundles kept in memory; a workspace rarely has more files with ops open at once. */
const MAX_CACHED_BUNDLES = 128;

/**
 * Characters of bundled code kept in the cache at most (~64 MiB of UTF-16): a file that imports
 * a large package makes a bundle of several MB, and the language server lives for hours.
 */
const MAX_CACHED_CHARS = 32 * 1024 * 1024;

export interface BundleRequest {
  /** Absolute path of the source file. */
  file: string;
  /** Its text (may differ from the disk: an unsaved editor buffer). */
  text: string;
  /** Top-level names to expose: forward, class, backward, samples and construct factories. */
  bindings: string[];
  /**
   * A TensorFlow.js package the file imports: its namespace is imported too (resolved from the
   * file's folder, so it is the user's own copy) and exposed as TENSOR_LIBRARY_BINDING.
   */
  tensorLibrary?: string;
}

export type BundleResult =
  | {
      ok: true;
      code: string;
      key: string;
      cached: boolean;
      buildMs: number;
      /** Maps a 1-based line and 0-based column of `code` to its source file, line and column. */
      originalPlace: (line: number, column: number) => SourcePlace | undefined;
      /**
       * Absolute paths of the files on disk that went into the bundle besides the checked file
       * itself (its imports, transitively, packages included), from esbuild's metafile: an edit
       * to any of them can change the op's result.
       */
      inputs: string[];
      /** Every mapping of the bundle's source map (decoded on first call, kept with the bundle; for coverage). */
      segments: () => MappedSegment[];
    }
  | { ok: false; message: string; location?: { file: string; line: number; column: number } };

export interface BundleStats {
  /** esbuild runs (cache misses that bundled). */
  builds: number;
  /** Requests answered from the cache after re-validating every input. */
  cacheHits: number;
  failures: number;
  /** Requests answered from the disk cache (after re-validating every input). */
  diskHits: number;
}

/** The paths of a cache entry's recorded inputs. */
function inputPaths(entry: CacheEntry): string[] {
  const paths: string[] = [];
  for (const input of entry.inputs) paths.push(input.path);
  return paths;
}

/** Decoded mappings per cache entry (not part of the entry: the disk cache stores entries). */
const decodedSegments = new WeakMap<CacheEntry, MappedSegment[]>();

/** All mappings of an entry's source map, decoded once and kept while the entry lives. */
function segmentsOf(entry: CacheEntry): () => MappedSegment[] {
  return () => {
    let segments = decodedSegments.get(entry);
    if (!segments) decodedSegments.set(entry, (segments = entry.sourceMap ? mappedSegments(entry.sourceMap, entry.mapDir) : []));
    return segments;
  };
}

/** Looks places up in an entry's source map (parsed on each call: only failures ask). */
function placeFinder(entry: CacheEntry): (line: number, column: number) => SourcePlace | undefined {
  return (line, column) => (entry.sourceMap ? originalPlace(entry.sourceMap, entry.mapDir, line, column) : undefined);
}

export interface BundlerOptions {
  /**
   * Keep bundles on disk between runs (bundleDiskCache.ts says where). Off by default so a
   * test's counts stay its own; the Checker turns it on.
   */
  diskCache?: boolean;
  /**
   * Only bundles that took at least this long to build go to disk (default
   * DISK_WORTHY_BUILD_MS): an editor buffer re-bundled on every edit writes nothing, a file
   * importing a large package is kept.
   */
  diskCacheMinBuildMs?: number;
}

/** Build time from which a bundle is worth keeping on disk (our choice: well above a small file's ~20 ms). */
const DISK_WORTHY_BUILD_MS = 150;

export class Bundler {
  readonly stats: BundleStats = { builds: 0, cacheHits: 0, failures: 0, diskHits: 0 };
  private readonly cache = new Map<string, CacheEntry>();
  private cachedChars = 0;

  constructor(private readonly options: BundlerOptions = {}) {}

  /** Bundles a file for the sandbox; never rejects. */
  async bundle(request: BundleRequest): Promise<BundleResult> {
    const file = resolve(request.file);
    const bindings = [...new Set(request.bindings)].sort();
    const bad = bindings.find((b) => !IDENTIFIER.test(b));
    if (bad !== undefined) return { ok: false, message: `"${bad}" is not a plain identifier` };
    const requestKey = sha256(file, request.text, bindings.join(','), request.tensorLibrary ?? '');
    const cached = this.cache.get(requestKey);
    if (cached && this.stillValid(cached)) {
      this.cache.delete(requestKey);
      this.cache.set(requestKey, cached);
      this.stats.cacheHits++;
      return {
        ok: true,
        code: cached.code,
        key: cached.key,
        cached: true,
        buildMs: 0,
        originalPlace: placeFinder(cached),
        inputs: inputPaths(cached),
        segments: segmentsOf(cached),
      };
    }
    this.forget(requestKey);
    const diskDir = this.options.diskCache ? bundleCacheDir() : undefined;
    const stored = diskDir ? readStoredBundle(diskDir, requestKey) : undefined;
    if (stored && this.stillValid(stored)) {
      this.stats.diskHits++;
      this.remember(requestKey, stored);
      return {
        ok: true,
        code: stored.code,
        key: stored.key,
        cached: true,
        buildMs: 0,
        originalPlace: placeFinder(stored),
        inputs: inputPaths(stored),
        segments: segmentsOf(stored),
      };
    }
    const started = performance.now();
    const result = await buildBundle(file, request.text, bindings, request.tensorLibrary);
    if (!result.ok) {
      this.stats.failures++;
      return result;
    }
    this.stats.builds++;
    this.remember(requestKey, result.entry);
    const buildMs = performance.now() - started;
    if (diskDir && buildMs >= (this.options.diskCacheMinBuildMs ?? DISK_WORTHY_BUILD_MS)) writeStoredBundle(diskDir, requestKey, result.entry);
    return {
      ok: true,
      code: result.entry.code,
      key: result.entry.key,
      cached: false,
      buildMs,
      originalPlace: placeFinder(result.entry),
      inputs: inputPaths(result.entry),
      segments: segmentsOf(result.entry),
    };
  }

  private remember(requestKey: string, entry: CacheEntry): void {
    this.cache.set(requestKey, entry);
    this.cachedChars += entry.code.length;
    // Oldest first; the newest entry always stays, however large.
    while (this.cache.size > 1 && (this.cache.size > MAX_CACHED_BUNDLES || this.cachedChars > MAX_CACHED_CHARS)) {
      const oldest = this.cache.keys().next().value;
      if (oldest === undefined) break;
      this.forget(oldest);
    }
  }

  /** Forgets every cached bundle. */
  clear(): void {
    this.cache.clear();
    this.cachedChars = 0;
  }

  private forget(key: string): void {
    const entry = this.cache.get(key);
    if (!entry) return;
    this.cache.delete(key);
    this.cachedChars -= entry.code.length;
  }

  /** An input is unchanged when its size and mtime match, or else its content hash does. */
  private stillValid(entry: CacheEntry): boolean {
    for (const input of entry.inputs) {
      let st;
      try {
        st = statSync(input.path);
      } catch {
        return false;
      }
      if (st.size === input.size && st.mtimeMs === input.mtimeMs) continue;
      try {
        if (sha256(readFileSync(input.path, 'latin1')) !== input.hash) return false;
      } catch {
        return false;
      }
      input.size = st.size;
      input.mtimeMs = st.mtimeMs;
    }
    return true;
  }
}
