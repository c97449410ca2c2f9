// Inside the installed .vsix the esbuild binary the sandbox bundles with ships under
// dist/node_modules, but a .vsix does not keep the executable bit: restore it before first use.

import { accessSync, chmodSync, constants, copyFileSync, existsSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

/** Where tools/package-vsix.mjs puts esbuild's platform binary, relative to dist/. */
const PACKAGED_BINARY = join('node_modules', '@esbuild', `${process.platform}-${process.arch}`, 'bin', 'esbuild');

/** Returns a note for the log when something was done or could not be, else undefined. */
export function prepareBundledEsbuild(distDir: string): string | undefined {
  const binary = join(distDir, PACKAGED_BINARY);
  if (!existsSync(binary) || process.env.ESBUILD_BINARY_PATH) return undefined;
  try {
    accessSync(binary, constants.X_OK);
    return undefined;
  } catch {
    // not executable: fix it below
  }
  try {
    chmodSync(binary, 0o755);
    return `made ${binary} executable`;
  } catch {
    // A read-only install folder: run a private copy instead (esbuild honours ESBUILD_BINARY_PATH).
    try {
      const copy = join(mkdtempSync(join(tmpdir(), 'gradient-probe-esbuild-')), 'esbuild');
      copyFileSync(binary, copy);
      chmodSync(copy, 0o755);
      process.env.ESBUILD_BINARY_PATH = copy;
      return `using a copy of esbuild at ${copy}`;
    } catch (err) {
      return `esbuild at ${binary} is not executable and could not be fixed: ${err instanceof Error ? err.message : String(err)}`;
    }
  }
}
