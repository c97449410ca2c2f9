// One esbuild run for the sandbox: the entry's text (an unsaved buffer, perhaps) with the code
// that exposes the ops' bindings, its imports and packages bundled into one IIFE with an
// external source map; Node built-ins replaced by stand-ins; a failure worded as one sentence
// naming the import and where it is.
import { createHash } from 'node:crypto';
import { readFileSync, statSync } from 'node:fs';
import { builtinModules } from 'node:module';
import { dirname, extname, isAbsolute, join, relative, resolve } from 'node:path';
import * as esbuild from 'esbuild';
import type * as esbuildTypes from 'esbuild';
import { UNAVAILABLE_BUILTIN_NAMESPACE, unavailableModuleCode } from './builtinStandIn';
import { exposeCode } from './exposeCode';

/** esbuild namespace of the empty stand-ins for Node built-ins imported by packages. */
const EMPTY_NAMESPACE = 'gradient-probe-empty';

/**
 * esbuild namespace of the stand-ins for Node built-ins imported by the user's own files. The
 * name shows in stack positions mapped back through the source map (sandbox/builtinStandIn.ts).
 */
const UNAVAILABLE_NAMESPACE = UNAVAILABLE_BUILTIN_NAMESPACE;

/** A file that went into a bundle, as recorded to re-validate the bundle later. */
export interface InputRecord {
  path: string;
  size: number;
  mtimeMs: number;
  hash: string;
}

/** A built bundle as the caches (memory and disk) keep it. */
export interface CacheEntry {
  code: string;
  key: string;
  /** The bundle's source map (JSON, without sources' contents) and the folder its paths are relative to. */
  sourceMap: string;
  mapDir: string;
  inputs: InputRecord[];
}

const LOADERS: Record<string, esbuildTypes.Loader> = {
  '.ts': 'ts',
  '.mts': 'ts',
  '.cts': 'ts',
  '.tsx': 'tsx',
  '.js': 'js',
  '.mjs': 'js',
  '.cjs': 'js',
  '.jsx': 'jsx',
};

export function sha256(...parts: string[]): string {
  const h = createHash('sha256');
  for (const p of parts) h.update(p).update('\0');
  return h.digest('hex');
}

function isBuiltinModule(name: string): boolean {
  const bare = name.startsWith('node:') ? name.slice(5) : name;
  return builtinModules.includes(bare.split('/')[0] ?? bare);
}

/** Turns esbuild's first error into one sentence naming the import and where it is. */
function describeFailure(entry: string, workDir: string, errors: esbuildTypes.Message[]): BuildFailure {
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

/** A failed build, worded for the user. */
export type BuildFailure = { ok: false; message: string; location?: { file: string; line: number; column: number } };

/** Bundles `text` as the module `file` with the bindings exposed; never rejects. */
export async function buildBundle(file: string, text: string, bindings: string[], tensorLibrary?: string): Promise<{ ok: true; entry: CacheEntry } | BuildFailure> {
  const workDir = dirname(file);
  const loader = LOADERS[extname(file).toLowerCase()] ?? 'ts';
  const entryContents = text + exposeCode(bindings, tensorLibrary, file);
  const entryPlugin: esbuildTypes.Plugin = {
    name: 'gradient-probe-entry',
    setup(build) {
      // The entry need not exist on disk (a new, unsaved editor buffer).
      build.onResolve({ filter: /.*/ }, (args) => (args.kind === 'entry-point' && resolve(workDir, args.path) === file ? { path: file, namespace: 'file' } : undefined));
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
      build.onLoad({ filter: /.*/, namespace: 'file' }, (args) => (resolve(args.path) === file ? { contents: entryContents, loader, resolveDir: workDir } : undefined));
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
    if (Array.isArray(errors) && errors.length > 0) return describeFailure(file, workDir, errors);
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
