// The workspace-wide features: list every annotated op of the workspace's sources (for the
// Testing view; nothing runs) and check them all with progress and cancellation, publishing
// diagnostics for every file so the Problems panel shows the whole workspace.

import type { ReportSummary } from '../model/types';
import { findSourceFiles } from '../project/files';
import { CheckRefused } from './checkService';
import type { FileOps, CheckWorkspaceResult, WorkspaceProgressParams } from './protocol';
import type { Session } from './session';
import { opSummaries } from './testsView';
import { UNTRUSTED_REASON } from './opStanding';

/** Files checked at the same time; the Checker spreads each file's ops over its runner processes. */
const FILES_IN_FLIGHT = 2;

/** Every source file of the given folders, per the folders' include/exclude globs. */
export async function workspaceFiles(session: Session, folders: string[]): Promise<{ files: string[]; problems: string[] }> {
  const files = new Set<string>();
  const problems: string[] = [];
  for (const folder of folders) {
    const settings = await session.effectiveSettings(folder, true);
    if (settings.configError) {
      problems.push(settings.configError.message);
      continue;
    }
    try {
      const config = { settings: settings.settings, include: settings.include, exclude: settings.exclude, ...(settings.configFile ? { file: settings.configFile } : {}) };
      for (const file of findSourceFiles([folder], config, folder)) files.add(file);
    } catch (err) {
      problems.push(err instanceof Error ? err.message : String(err));
    }
  }
  return { files: [...files].sort(), problems };
}

export async function listWorkspaceOps(session: Session, folders: string[]): Promise<FileOps[]> {
  const { files } = await workspaceFiles(session, folders);
  const out: FileOps[] = [];
  for (const file of files) {
    const facts = await session.facts(file);
    if (facts && facts.snapshot.ops.length > 0) out.push(opSummaries(facts));
  }
  return out;
}

export async function checkWorkspace(
  session: Session,
  folders: string[],
  signal: AbortSignal,
  progress: (p: WorkspaceProgressParams) => void,
  relative: (fsPath: string) => string,
): Promise<CheckWorkspaceResult> {
  const summary: ReportSummary = { pass: 0, mismatch: 0, inconclusive: 0, error: 0 };
  const { files, problems } = await workspaceFiles(session, folders);
  const isolatedAllowed = await Promise.all(folders.map(async (f) => (await session.effectiveSettings(f, true)).isolatedWhenUntrusted));
  if (!session.checks.isTrusted && !isolatedAllowed.some(Boolean)) {
    return { ...summary, files: files.length, cancelled: false, reason: UNTRUSTED_REASON, reasonCode: 'untrusted' };
  }
  let done = 0;
  let next = 0;
  const worker = async (): Promise<void> => {
    while (next < files.length && !signal.aborted) {
      const file = files[next++]!;
      try {
        // Ops with annotation errors come back as `error` results without running, as in the CLI.

        for (const result of await session.check(file, { signal })) summary[result.verdict]++;
      } catch (err) {
        if (!(err instanceof CheckRefused)) session.log(`workspace check of ${file} failed: ${err instanceof Error ? err.message : String(err)}`);
      }
      session.changed(file);
      progress({ done: ++done, total: files.length, file: relative(file) });
    }
  };
  await Promise.all(Array.from({ length: Math.min(FILES_IN_FLIGHT, files.length) }, worker));
  await session.pushNow();
  return {
    ...summary,
    files: files.length,
    cancelled: signal.aborted,
    ...(problems.length > 0 ? { reason: problems.join('; ') } : {}),
  };
}
