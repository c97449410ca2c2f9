// Reads `.gitignore` files into matchers: the common subset of the format (comments, `!`
// negation, trailing `/` for folders, leading or inner `/` anchoring, `*`, `?`, `**`, classes).

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import picomatch from 'picomatch';
import { relativeInside } from './paths';

interface IgnoreRule {
  negate: boolean;
  dirOnly: boolean;
  match: (relPath: string) => boolean;
}

/** The rules of one `.gitignore`, applying to paths under `baseDir`. */
export interface IgnoreFile {
  baseDir: string;
  rules: IgnoreRule[];
}

/** Parses the text of a `.gitignore` whose folder is `baseDir`. */
export function parseGitignore(text: string, baseDir: string): IgnoreFile {
  const rules: IgnoreRule[] = [];
  for (const rawLine of text.split(/\r?\n/)) {
    let line = rawLine.replace(/(?<!\\)\s+$/, '');
    if (line === '' || line.startsWith('#')) continue;
    let negate = false;
    if (line.startsWith('!')) {
      negate = true;
      line = line.slice(1);
    } else if (line.startsWith('\\!') || line.startsWith('\\#')) {
      line = line.slice(1);
    }
    const dirOnly = line.endsWith('/');
    if (dirOnly) line = line.replace(/\/+$/, '');
    if (line === '') continue;
    // git: a slash at the start or in the middle anchors the pattern to the .gitignore's folder;
    // otherwise it matches at any depth.
    const anchored = line.includes('/');
    if (line.startsWith('/')) line = line.slice(1);
    const glob = anchored ? line : `**/${line}`;
    const matcher = picomatch(glob, { dot: true });
    rules.push({ negate, dirOnly, match: (p) => matcher(p) });
  }
  return { baseDir, rules };
}

/** Reads `dir/.gitignore`, or undefined when there is none. */
export function readGitignore(dir: string): IgnoreFile | undefined {
  let text: string;
  try {
    text = readFileSync(join(dir, '.gitignore'), 'utf8');
  } catch {
    return undefined;
  }
  const parsed = parseGitignore(text, dir);
  return parsed.rules.length > 0 ? parsed : undefined;
}

/**
 * Whether `absPath` is ignored by the given files, outermost first: as in git, a deeper file's
 * rules and later rules win over earlier ones.
 */
export function isIgnored(absPath: string, isDir: boolean, files: readonly IgnoreFile[]): boolean {
  let ignored = false;
  for (const file of files) {
    const relPath = relativeInside(file.baseDir, absPath);
    if (relPath === undefined) continue;
    for (const rule of file.rules) {
      if (rule.dirOnly && !isDir) continue;
      if (rule.match(relPath)) ignored = !rule.negate;
    }
  }
  return ignored;
}
