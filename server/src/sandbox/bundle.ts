// Bundles one source file (the editor's unsaved text, or the file on disk) with its relative
// imports and packages into one script for the sandbox, in memory, with esbuild; appends code
// that exposes the ops' bindings (exported or not); caches bundles by the content of every input.
import { createHash } from 'node:crypto';
import { readFileSync, statSync } from 'node:fs';
import { builtinModules } from 'node:module';
import { dirname, extname, isAbsolute, join, relative, resolve } from 'node:path';
import * as esbuild from 'esbuild';
import type * as esbuildTypes from 'esbuild';
import { DEFAULT_EXPORT_BINDING, TENSOR_LIBRARY_BINDING } from '../model/types';
import { UNAVAILABLE_BUILTIN_NAMESPACE, unavailableModuleCode } from './builtinStandIn';
import { bundleCacheDir, readStoredBundle, writeStoredBundle } from './bundleDiskCache';
import { mappedSegments, originalPlace, type MappedSegment, type SourcePlace } from './sourceMap';

/** Bundles kept in memory; a workspace rarely has more files with ops open at once. */
const MAX_CACHED_BUNDLES = 128;

/**
 * Characters of bundled code kept in the cache at most (~64 MiB of UTF-16): a file that imports
 * a large package makes a bundle of several MB, and the language server lives for hours.
 */
const MAX_CACHED_CHARS = 32 * 1024 * 1024;

/** esbuild namespace of the empty stand-ins for Node built-ins imported by packages. */
const EMPTY_NAMESPACE = 'gradient-probe-empty';

/**
 * esbuild namespace of the stand-ins for Node built-ins imported by the user's own files. The
 * name shows in stack positions mapped back through the source map (sandbox/builtinStandIn.ts).
 */
const UNAVAILABLE_NAMESPACE = UNAVAILABLE_BUILTIN_NAMESPACE;

/** A binding name we may splice into code: a plain identifier, nothing else. */
const IDENTIFIER = /^[A-Za-z_$][A-Za-z0-9_$]*$/;

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

interface InputRecord {
  path: string;
  size: number;
  mtimeMs: number;
  hash: string;
}

interface CacheEntry {
  code: string;
  key: string;
  /** The bundle's source map (JSON, without sources' contents) and the folder its paths are relative to. */
  sourceMap: string;
  mapDir: string;
  inputs: InputRecord[];
}

const LOADERS: Record<string, esbuildTypes.Loader> = {
  '.ts': 'ts', '.mts': 'ts', '.cts': 'ts', '.tsx': 'tsx', '.js': 'js', '.mjs': 'js', '.cjs': 'js', '.jsx': 'jsx',
};

/** The paths of a cache entry's recorded inputs. */
function inputPaths(entry: CacheEntry): string[] {
  const paths: string[] = [];
  for (const input of entry.inputs) paths.push(input.path);
  return paths;
}

function sha256(...parts: string[]): string {
  const h = createHash('sha256');
  for (const p of parts) h.update(p).update('\0');
  return h.digest('hex');
}

/** Package names a tensor-library import may name (checked again here: it is spliced into code). */
const TENSOR_LIBRARY_PACKAGE = /^@tensorflow\/tfjs(?:-core|-node|-node-gpu)?$/;

/**
 * The code appended to the entry: `globalThis.__gradientProbeExposed = { name: …, … }`, with
 * the tensor library's namespace (an import, hoisted like every import) when asked for.
 */
export function exposeCode(bindings: string[], tensorLibrary?: string, file?: string): string {
  const names = [...new Set(bindings)].filter((n) => IDENTIFIER.test(n)).sort();
  const fields = names.map((n) => `  ${JSON.stringify(n)}: typeof ${n} !== 'undefined' ? ${n} : undefined`);
  let head = '';
  if (tensorLibrary !== undefined && TENSOR_LIBRARY_PACKAGE.test(tensorLibrary)) {
    head = `\n;import * as ${TENSOR_LIBRARY_BINDING} from ${JSON.stringify(tensorLibrary)};`;
    fields.push(`  ${JSON.stringify(TENSOR_LIBRARY_BINDING)}: ${TENSOR_LIBRARY_BINDING}`);
  }
  // An anonymous default export has no name in its module: a self-import gives it one (the
  // bundler resolves it to the same module, so nothing runs twice).
  if (file !== undefined && names.includes(DEFAULT_EXPORT_BINDING)) head += `\nimport ${DEFAULT_EXPORT_BINDING} from ${JSON.stringify(file)};`;
  return `${head}\n;globalThis.__gradientProbeExposed = {\n${fields.join(',\n')}\n};\n`;
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

function isBuiltinModule(name: string): boolean {
  const bare = name.startsWith('node:') ? name.slice(5) : name;
  return builtinModules.includes(bare.split('/')[0] ?? bare);
}

/** Turns esbuild's first error into one sentence naming the import and where it is. */
function describeFailure(entry: string, workDir: string, errors: esbuildTypes.Message[]): BundleResult {
  const first = errors[0];
  if (!first) return { ok: false, message: `the module could not be bundled` };
  let text = first.text;
  const unresolved = /^Could not resolve "([^"]+)"/.exec(text);
  if (unresolved) {
    const name = unresolved[1];
    text = isBuiltinModule(name)
      ? `cannot import "${name}": Node's built-in modules are not available to code checked in the sandbox`
      : `cannot import "${name}": no such file or package`;
  }
  const loc = first.location;
  if (!loc) return { ok: false, message: text };
  const file = resolve(workDir, loc.file);
  const line = loc.line;
  const column = loc.column + 1;
  const where = file === entry ? `line ${line}` : `${relative(dirname(entry), file) || file}:${line}:${column}`;
  const more = errors.length > 1 ? ` (and ${errors.length - 1} more error${errors.length > 2 ? 's' : ''})` : '';
  return { ok: false, message: `${text} (${where})${more}`, location: { file, line, column } };
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
      return { ok: true, code: cached.code, key: cached.key, cached: true, buildMs: 0, originalPlace: placeFinder(cached), inputs: inputPaths(cached), segments: segmentsOf(cached) };
    }
    this.forget(requestKey);
    const diskDir = this.options.diskCache ? bundleCacheDir() : undefined;
    const stored = diskDir ? readStoredBundle(diskDir, requestKey) : undefined;
    if (stored && this.stillValid(stored)) {
      this.stats.diskHits++;
      this.remember(requestKey, stored);
      return { ok: true, code: stored.code, key: stored.key, cached: true, buildMs: 0, originalPlace: placeFinder(stored), inputs: inputPaths(stored), segments: segmentsOf(stored) };
    }
    const started = performance.now();
    const result = await this.build(file, request.text, bindings, request.tensorLibrary);
    if (!result.ok) {
      this.stats.failures++;
      return result;
    }
    this.stats.builds++;
    this.remember(requestKey, result.entry);
    const buildMs = performance.now() - started;
    if (diskDir && buildMs >= (this.options.diskCacheMinBuildMs ?? DISK_WORTHY_BUILD_MS)) writeStoredBundle(diskDir, requestKey, result.entry);
    return { ok: true, code: result.entry.code, key: result.entry.key, cached: false, buildMs, originalPlace: placeFinder(result.entry), inputs: inputPaths(result.entry), segments: segmentsOf(result.entry) };
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

  private async build(file: string, text: string, bindings: string[], tensorLibrary?: string): Promise<{ ok: true; entry: CacheEntry } | (BundleResult & { ok: false })> {
    const workDir = dirname(file);
    const loader = LOADERS[extname(file).toLowerCase()] ?? 'ts';
    const entryContents = text + exposeCode(bindings, tensorLibrary, file);
    const entryPlugin: esbuildTypes.Plugin = {
      name: 'gradient-probe-entry',
      setup(build) {
        // The entry need not exist on disk (a new, unsaved editor buffer).
        build.onResolve({ filter: /.*/ }, (args) =>
          args.kind === 'entry-point' && resolve(workDir, args.path) === file ? { path: file, namespace: 'file' } : undefined,
        );
        // A package that imports a Node built-in (usually on a code path for Node only) gets
        // an empty module, as bundlers for the browser do; the user's own files get a clear
        // error instead, since their code would fail at run time.
        build.onResolve({ filter: /^[a-z_:][a-z0-9_/:.-]*$/ }, (args) =>
          isBuiltinModule(args.path) && /[\\/]node_modules[\\/]/.test(args.importer) ? { path: args.path, namespace: EMPTY_NAMESPACE } : undefined,
        );
        build.onLoad({ filter: /.*/, namespace: EMPTY_NAMESPACE }, () => ({ contents: 'module.exports = {};', loader: 'js' }));
        // The user's own files get a stand-in whose members throw when used, naming the module
        // and the member: a logging helper that imports `node:path` but is never called during
        // the check does not make the file uncheckable.
        build.onResolve({ filter: /^[a-z_:][a-z0-9_/:.-]*$/ }, (args) =>
          isBuiltinModule(args.path) && !/[\\/]node_modules[\\/]/.test(args.importer)
            ? { path: `${args.path}|${relative(workDir, args.importer) || args.importer}`, namespace: UNAVAILABLE_NAMESPACE }
            : undefined,
        );
        build.onLoad({ filter: /.*/, namespace: UNAVAILABLE_NAMESPACE }, (args) => {
          const bar = args.path.indexOf('|');
          return { contents: unavailableModuleCode(args.path.slice(0, bar), args.path.slice(bar + 1)), loader: 'js' };
        });
        // The entry's text comes from the caller (an unsaved buffer), also when another
        // module imports it back (an import cycle).
        build.onLoad({ filter: /.*/, namespace: 'file' }, (args) =>
          resolve(args.path) === file ? { contents: entryContents, loader, resolveDir: workDir } : undefined,
        );
      },
    };
    let out: esbuildTypes.BuildResult<{ write: false; metafile: true }>;
    try {
      out = await esbuild.build({
        entryPoints: [file],
        absWorkingDir: workDir,
        // Named only so the source map has a place; nothing is written (write: false).
        outfile: join(workDir, 'gradient-probe-bundle.js'),
        sourcemap: 'external',
        sourcesContent: false,
        bundle: true,
        write: false,
        metafile: true,
        format: 'iife',
        platform: 'neutral',
        // With platform 'neutral' esbuild reads no package.json main field unless told to.
        mainFields: ['module', 'main'],
        target: 'es2022',
        logLevel: 'silent',
        plugins: [entryPlugin],
      });
    } catch (e) {
      const errors = (e as { errors?: esbuildTypes.Message[] }).errors;
      if (Array.isArray(errors) && errors.length > 0) return describeFailure(file, workDir, errors) as BundleResult & { ok: false };
      return { ok: false, message: `the module could not be bundled: ${(e as Error).message}` };
    }
    const output = out.outputFiles.find((f) => f.path.endsWith('.js'));
    const map = out.outputFiles.find((f) => f.path.endsWith('.map'));
    if (!output) return { ok: false, message: 'the bundler produced no output' };
    const code = output.text;
    const inputs: InputRecord[] = [];
    for (const key of Object.keys(out.metafile.inputs)) {
      const path = isAbsolute(key) ? key : resolve(workDir, key);
      if (path === file) continue; // its content is part of the cache key
      try {
        const st = statSync(path);
        inputs.push({ path, size: st.size, mtimeMs: st.mtimeMs, hash: sha256(readFileSync(path, 'latin1')) });
      } catch {
        // Not a file on disk (a virtual namespace): nothing to re-validate.
      }
    }
    return { ok: true, entry: { code, key: sha256(code), inputs, sourceMap: map?.text ?? '', mapDir: dirname(map?.path ?? join(workDir, 'x')) } };
  }
}
