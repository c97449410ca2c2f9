// Spawning the real `gradient-probe` binary from tests: where it is, and one run of it with
// its stdout, stderr and exit code. Shared by the CLI suite and the hostile-code suite.

import { spawn } from 'node:child_process';
import { existsSync } from 'node:fs';
import { dirname, join } from 'node:path';

/** The repository root: the folder above the running test that holds bin/gradient-probe.js. */
export function repoRoot(): string {
  let dir = __dirname;
  while (!existsSync(join(dir, 'bin', 'gradient-probe.js'))) {
    const up = dirname(dir);
    if (up === dir) throw new Error('bin/gradient-probe.js not found above the test');
    dir = up;
  }
  return dir;
}

export const ROOT = repoRoot();
export const BIN = join(ROOT, 'bin', 'gradient-probe.js');

export interface CliRun {
  code: number | null;
  stdout: string;
  stderr: string;
}

/** No CLI run of a suite should take this long; past it the process is killed and the test fails. */
export const SPAWN_LIMIT_MS = 120_000;

/** Runs `node bin/gradient-probe.js ARGS` (in `cwd`, default the repository root) with the caller's environment plus `env`. */
export function runCli(args: string[], options: { cwd?: string; env?: Record<string, string> } = {}): Promise<CliRun> {
  return new Promise((resolve, reject) => {
    const env: Record<string, string | undefined> = { ...process.env, ...options.env };
    delete env['FORCE_COLOR'];
    const child = spawn(process.execPath, [BIN, ...args], { cwd: options.cwd ?? ROOT, env, stdio: ['ignore', 'pipe', 'pipe'] });
    let stdout = '';
    let stderr = '';
    child.stdout.setEncoding('utf8').on('data', (d: string) => (stdout += d));
    child.stderr.setEncoding('utf8').on('data', (d: string) => (stderr += d));
    const timer = setTimeout(() => {
      child.kill('SIGKILL');
      reject(new Error(`gradient-probe ${args.join(' ')} did not finish within ${SPAWN_LIMIT_MS} ms\nstderr: ${stderr}`));
    }, SPAWN_LIMIT_MS);
    child.on('error', reject);
    child.on('close', (code) => {
      clearTimeout(timer);
      resolve({ code, stdout, stderr });
    });
  });
}
