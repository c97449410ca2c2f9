// The editor suites run on a copy of the demo workspace outside the repository; the demo imports
// @tensorflow/tfjs (examples/src/soiling.ts), so the copy gets a link to the repository's
// node_modules, as a user's project has its own.
import { existsSync, symlinkSync } from 'node:fs';
import { join } from 'node:path';

export function linkRepositoryPackages(root: string, workspace: string): void {
  const target = join(workspace, 'node_modules');
  // 'junction' makes a directory link on Windows too; elsewhere it is an ordinary symlink.
  if (!existsSync(target)) symlinkSync(join(root, 'node_modules'), target, 'junction');
}
