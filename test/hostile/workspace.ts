// Shared by the hostile suites: where the repository and the hostile workspace are, a fresh
// copy of that workspace with its escape marker folder filled in, the CLI spawned as a user
// would run it, and line lookups in the fixture sources.
import { cpSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { COVERAGE_RUNNER_ARG } from '../../server/src/sandbox/jobTypes';
import { ROOT, runCli as runCliIn, type CliRun } from '../helpers/cli';

export { BIN, ROOT, type CliRun } from '../helpers/cli';

export const HOSTILE_FIXTURES = join(ROOT, 'test', 'fixtures', 'hostile');

/** The placeholder in escape.ts that the copy replaces with its marker folder. */
const MARKER_PLACEHOLDER = '__MARKER_DIR__';

/** A private copy of test/fixtures/hostile: escape attempts aim at its own empty marker folder. */
export interface HostileCopy {
  /** Root of the copied workspace. */
  dir: string;
  /** Where an escaped op would write; must stay empty. */
  markerDir: string;
  /** Absolute path of a file of the copy. */
  file(rel: string): string;
  text(rel: string): string;
  /** Files escape attempts wrote (none, if the sandbox holds). */
  markers(): string[];
  remove(): void;
}

export function copyHostileWorkspace(): HostileCopy {
  const base = mkdtempSync(join(tmpdir(), 'gp-hostile-'));
  const dir = join(base, 'workspace');
  const markerDir = join(base, 'markers');
  cpSync(HOSTILE_FIXTURES, dir, { recursive: true });
  const escape = readFileSync(join(HOSTILE_FIXTURES, 'escape.ts'), 'utf8');
  if (!escape.includes(MARKER_PLACEHOLDER)) throw new Error(`escape.ts lost its ${MARKER_PLACEHOLDER} placeholder`);
  writeFileSync(join(dir, 'escape.ts'), escape.split(MARKER_PLACEHOLDER).join(markerDir));
  // The folder exists, so a write into it would succeed if an op reached a file system.
  mkdirSync(markerDir);
  return {
    dir,
    markerDir,
    file: (rel) => join(dir, rel),
    text: (rel) => readFileSync(join(dir, rel), 'utf8'),
    markers: () => readdirSync(markerDir),
    remove: () => rmSync(base, { recursive: true, force: true }),
  };
}

/** Runs `node bin/gradient-probe.js ARGS` in `cwd`, with the caller's environment. */
export function runCli(args: string[], cwd: string): Promise<CliRun> {
  return runCliIn(args, { cwd });
}

/** 1-based line of the first line of `text` that contains `needle`; throws when there is none. */
export function lineOf(text: string, needle: string): number {
  const i = text.split('\n').findIndex((l) => l.includes(needle));
  if (i < 0) throw new Error(`"${needle}" not found`);
  return i + 1;
}

/** Of the given process ids, those that are runner processes (the pool's or the interpreter's). */
export function runnerProcesses(pids: number[]): number[] {
  return pids.filter((pid) => {
    try {
      const cmdline = readFileSync(`/proc/${pid}/cmdline`, 'utf8');
      // Coverage runners are a pool of their own (coverageRunnerProcesses).
      return /sandbox-child\.js|isolated-worker\.js/.test(cmdline) && !cmdline.includes(COVERAGE_RUNNER_ARG);
    } catch {
      return false; // it ended while we looked
    }
  });
}

/** The coverage runners among `pids` (started with the coverage argument, see sandbox/coverageSession.ts). */
export function coverageRunnerProcesses(pids: number[]): number[] {
  return pids.filter((pid) => {
    try {
      return readFileSync(`/proc/${pid}/cmdline`, 'utf8').split('\0').includes(COVERAGE_RUNNER_ARG);
    } catch {
      return false; // it ended while we looked
    }
  });
}
