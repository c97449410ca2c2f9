// The workspace file walk: which TypeScript sources a check covers, from the paths given,
// the skipped folders, `.gitignore` files and the configuration's include/exclude globs.

import { existsSync, readdirSync, statSync, type Dirent } from 'node:fs';
import { dirname, join, relative, resolve } from 'node:path';
import picomatch from 'picomatch';
import type { ProjectConfig } from './config';
import { isIgnored, readGitignore, type IgnoreFile } from './gitignore';
import { relativeInside, toSlashes } from './paths';

/** Extensions of the sources we check (declaration files hold no code and are left out). */
const SOURCE_EXTENSIONS = ['.ts', '.tsx', '.mts', '.cts'];
const DECLARATION_SUFFIXES = ['.d.ts', '.d.mts', '.d.cts'];
/** Folders never walked: installed packages, git's own data, build output. */
const SKIPPED_FOLDERS = new Set(['node_modules', '.git', 'dist']);

/** A path given to the walk that does not exist or is not a TypeScript source. */
export class SourcePathError extends Error {
  path: string;
  constructor(message: string, path: string) {
    super(message);
    this.name = 'SourcePathError';
    this.path = path;
  }
}

/** What the globs left out, so an empty walk can say why (filled by findSourceFiles when given). */
export interface WalkStats {
  /** Sources found under folders before the include/exclude globs. */
  seen: number;
  /** Sources left out because they match no include glob. */
  notIncluded: number;
  /** Per exclude glob, the sources and folders it left out. */
  excluded: Map<string, { files: number; folders: number }>;
}

/** Empty walk statistics to pass to findSourceFiles. */
export function newWalkStats(): WalkStats {
  return { seen: 0, notIncluded: 0, excluded: new Map() };
}

/** Whether a file name is a TypeScript source we check. */
export function isSourceFileName(name: string): boolean {
  const lower = name.toLowerCase();
  return SOURCE_EXTENSIONS.some((ext) => lower.endsWith(ext)) && !DECLARATION_SUFFIXES.some((s) => lower.endsWith(s));
}

/**
 * The sources under `paths` (files or folders, relative to `cwd`; default `cwd`), absolute,
 * sorted by code unit, without duplicates. A file named explicitly is always included (the
 * user asked for it); files found in folders pass the skip list, `.gitignore` and the
 * include/exclude globs, which are relative to the configuration file's folder (else `cwd`).
 */
export function findSourceFiles(paths: string[], config: ProjectConfig, cwd: string, tally: WalkStats = newWalkStats()): string[] {
  const roots = (paths.length > 0 ? paths : ['.']).map((p) => resolve(cwd, p));
  const globBase = config.file ? dirname(config.file) : resolve(cwd);
  const globs = {
    include: config.include.length > 0 ? picomatch(config.include, { dot: true }) : undefined,
    exclude: config.exclude.length > 0 ? picomatch(config.exclude, { dot: true }) : undefined,
  };
  // One matcher per exclude glob, so the statistics can name the glob that left a file out.
  const excludeEach = config.exclude.map((glob) => [glob, picomatch(glob, { dot: true })] as const);
  const countExcluded = (rel: string, kind: 'files' | 'folders'): void => {
    const hit = excludeEach.find(([, match]) => match(rel));
    if (!hit) return;
    const entry = tally.excluded.get(hit[0]) ?? { files: 0, folders: 0 };
    entry[kind]++;
    tally.excluded.set(hit[0], entry);
  };
  const found = new Set<string>();

  for (const root of roots) {
    let stats;
    try {
      stats = statSync(root);
    } catch {
      throw new SourcePathError(`${relativeForMessage(cwd, root)}: no such file or folder`, root);
    }
    if (stats.isFile()) {
      if (!isSourceFileName(root)) {
        throw new SourcePathError(`${relativeForMessage(cwd, root)}: not a TypeScript source (.ts, .tsx, .mts or .cts)`, root);
      }
      found.add(root);
      continue;
    }
    const ignoreFiles = ancestorGitignores(root);
    walk(
      root,
      ignoreFiles,
      (file) => {
        const rel = relativeInside(globBase, file);
        tally.seen++;
        // Globs describe the project's own files; a file outside the project is not theirs to judge.
        if (rel !== undefined) {
          if (globs.include && !globs.include(rel)) {
            tally.notIncluded++;
            return;
          }
          if (globs.exclude && globs.exclude(rel)) {
            countExcluded(rel, 'files');
            return;
          }
        }
        found.add(file);
      },
      (folder) => {
        const rel = relativeInside(globBase, folder);
        const excluded = rel !== undefined && globs.exclude !== undefined && globs.exclude(rel);
        if (excluded) countExcluded(rel, 'folders');
        return excluded;
      },
    );
  }
  return [...found].sort((a, b) => (a < b ? -1 : a > b ? 1 : 0));
}

/** Depth-first walk in sorted order, applying each folder's `.gitignore` to its subtree. */
function walk(dir: string, ignoreFiles: IgnoreFile[], onFile: (file: string) => void, isExcludedFolder: (folder: string) => boolean): void {
  const own = readGitignore(dir);
  const rules = own ? [...ignoreFiles, own] : ignoreFiles;
  let entries: Dirent[];
  try {
    entries = readdirSync(dir, { withFileTypes: true });
  } catch {
    return; // an unreadable folder holds nothing we can check
  }
  entries.sort((a, b) => (a.name < b.name ? -1 : a.name > b.name ? 1 : 0));
  for (const entry of entries) {
    const path = join(dir, entry.name);
    let isDir = entry.isDirectory();
    let isFile = entry.isFile();
    if (entry.isSymbolicLink()) {
      // Linked files are followed; linked folders are not (they can loop).
      try {
        isFile = statSync(path).isFile();
      } catch {
        isFile = false;
      }
      isDir = false;
    }
    if (isDir) {
      if (SKIPPED_FOLDERS.has(entry.name)) continue;
      if (isIgnored(path, true, rules) || isExcludedFolder(path)) continue;
      walk(path, rules, onFile, isExcludedFolder);
    } else if (isFile && isSourceFileName(entry.name) && !isIgnored(path, false, rules)) {
      onFile(path);
    }
  }
}

/**
 * `.gitignore` files of the folders above `root`, up to the repository root (the nearest folder
 * with `.git`), outermost first. Outside a repository only `root`'s own file applies.
 */
function ancestorGitignores(root: string): IgnoreFile[] {
  const chain: string[] = [];
  let current = dirname(root);
  let repoRoot: string | undefined;
  if (existsSync(join(root, '.git'))) repoRoot = root;
  while (repoRoot === undefined) {
    chain.push(current);
    if (existsSync(join(current, '.git'))) repoRoot = current;
    const parent = dirname(current);
    if (parent === current) break;
    current = parent;
  }
  if (repoRoot === undefined || repoRoot === root) return [];
  return chain
    .reverse()
    .map(readGitignore)
    .filter((f): f is IgnoreFile => f !== undefined);
}

function relativeForMessage(cwd: string, abs: string): string {
  return toSlashes(relative(cwd, abs)) || '.';
}
