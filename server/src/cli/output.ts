// Writes a finished report in the requested forms: `--sarif` and `--junit` files, then the JSON
// or the human table on stdout. Shared by `check` and `merge`, so both print the same way.

import { mkdirSync, writeFileSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import type { Report } from '../model/types';
import type { CheckOptions } from './args';
import { formatHuman } from './human';
import { formatJunit } from './junit';
import type { FailPolicy } from './report';
import { formatSarif } from './sarif';
import { shouldUseColor } from './terminal';

/** Where the command writes; process globals in production. */
export interface OutputIo {
  cwd: string;
  env: Record<string, string | undefined>;
  stdout: { write(text: string): unknown; isTTY?: boolean };
  stderr: { write(text: string): unknown; isTTY?: boolean };
}

export interface EmitOptions {
  fileCount?: number;
  elapsedMs?: number;
  /** Lines the human form prints above the summary (configuration file, shard, skipped ops). */
  notes?: string[];
}

/** The fail policy the flags ask for. */
export function failPolicyOf(options: CheckOptions): FailPolicy {
  return { failOnInconclusive: options.failOnInconclusive, allowUnfinished: options.allowUnfinished };
}

/** Writes the report files and stdout; false when a report file could not be written (exit 2). */
export function emitReport(report: Report, options: CheckOptions, io: OutputIo, toolVersion: string, extra: EmitOptions = {}): boolean {
  const written = writeReportFiles(report, options, io, toolVersion);
  if (options.json) {
    io.stdout.write(JSON.stringify(report, null, 2) + '\n');
  } else {
    const color = shouldUseColor(options.color, io.stdout.isTTY === true, io.env);
    const human: Parameters<typeof formatHuman>[1] = { color, onlyProblems: options.onlyProblems, ...extra };
    io.stdout.write(formatHuman(report, human));
  }
  return written;
}

/** Writes `--sarif` and `--junit` files (creating their folders); false when one could not be written. */
function writeReportFiles(report: Report, options: CheckOptions, io: OutputIo, toolVersion: string): boolean {
  const outputs: [string, string | undefined, () => string][] = [
    ['--sarif', options.sarif, () => formatSarif(report, { toolVersion, rootDir: io.cwd })],
    ['--junit', options.junit, () => formatJunit(report, { ...failPolicyOf(options), failOnUnreached: options.failOnUnreached })],
  ];
  let ok = true;
  for (const [flag, target, render] of outputs) {
    if (target === undefined) continue;
    const path = resolve(io.cwd, target);
    try {
      mkdirSync(dirname(path), { recursive: true });
      writeFileSync(path, render());
    } catch (err) {
      io.stderr.write(`gradient-probe: ${flag} ${target}: cannot write the file (${err instanceof Error ? err.message : String(err)})\n`);
      ok = false;
    }
  }
  return ok;
}
