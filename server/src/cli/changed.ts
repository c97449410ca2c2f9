// `check --changed-since REF`: which files changed since a git revision (committed, staged,
// unstaged and untracked), and whether an op's bundle could have changed: one of the files it
// was built from (the bundler's own list of inputs) is among them.

import { execFileSync } from 'node:child_process';
import { realpathSync } from 'node:fs';
import { basename, join, sep } from 'node:path';

/** A `--changed-since` revision git could not use, or a folder outside a repository. */
export class ChangedSinceError extends Error {}

/** Files whose change may change every op: the configuration, and package manifests for installed packages. */
const LOCK_FILES = new Set(['package.json', 'package-lock.json', 'npm-shrinkwrap.json', 'yarn.lock', 'pnpm-lock.yaml']);

export interface ChangedFiles {
  ref: string;
  /** Real absolute paths of the changed files. */
  files: Set<string>;
  /** A package manifest or lock file changed: inputs from node_modules count as changed. */
  packagesChanged: boolean;
}

/** The files changed between `ref` and the working tree of the repository holding `cwd`. */
export function changedFilesSince(ref: string, cwd: string): ChangedFiles {
  const git = (args: string[]): string => {
    try {
      return execFileSync('git', args, { cwd, encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'], maxBuffer: 256 << 20 });
    } catch (err) {
      const stderr =
        String((err as { stderr?: unknown }).stderr ?? '')
          .trim()
          .split('\n')[0] ?? '';
      throw new ChangedSinceError(`--changed-since ${ref}: git ${args[0]} failed${stderr ? `: ${stderr}` : ` (${(err as Error).message})`}`);
    }
  };
  const top = git(['rev-parse', '--show-toplevel']).trim();
  // Resolve first so a bad revision is named as such, not as a diff failure.
  git(['rev-parse', '--verify', '--quiet', '--end-of-options', `${ref}^{commit}`]);
  const listed = [
    ...git(['diff', '--name-only', '-z', '--no-renames', ref, '--']).split('\0'),
    ...git(['ls-files', '--others', '--exclude-standard', '--full-name', '-z', '--', ':/']).split('\0'),
  ].filter((p) => p !== '');
  const files = new Set<string>();
  let packagesChanged = false;
  for (const rel of listed) {
    const abs = join(top, rel);
    files.add(realOrSelf(abs));
    if (LOCK_FILES.has(basename(rel))) packagesChanged = true;
  }
  return { ref, files, packagesChanged };
}

/** Whether a bundle built from `inputs` (absolute paths) could differ from the one at the revision. */
export function inputsChanged(changed: ChangedFiles, inputs: readonly string[]): boolean {
  for (const input of inputs) {
    const real = realOrSelf(input);
    if (changed.files.has(real)) return true;
    if (changed.packagesChanged && real.includes(`${sep}node_modules${sep}`)) return true;
  }
  return false;
}

function realOrSelf(path: string): string {
  try {
    return realpathSync(path);
  } catch {
    return path; // deleted since the revision: it cannot be an input now
  }
}
