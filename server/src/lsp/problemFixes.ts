// The fixes a reported annotation problem admits, carried as data on its diagnostic: a
// did-you-mean replacement, "add the missing @sample lines", or "create the missing function".
// Discovery fills Problem.fixes where it makes the problem; nothing is read from the wording.

import type { Problem, ProblemFix } from '../model/types';

/** The diagnostic `data` of a problem with fixes (codeActions.ts reads it back with fixesFromData). */
export function fixData(problem: Problem): { data?: { fixes: ProblemFix[] } } {
  return problem.fixes && problem.fixes.length > 0 ? { data: { fixes: problem.fixes } } : {};
}

/** Reads the fixes back from a diagnostic's `data` (the client returns it unchanged); malformed ones are dropped. */
export function fixesFromData(data: unknown): ProblemFix[] {
  if (!data || typeof data !== 'object') return [];
  const fixes = (data as { fixes?: unknown }).fixes;
  if (!Array.isArray(fixes)) return [];
  return fixes.filter(isFix);
}

function isFix(value: unknown): value is ProblemFix {
  if (!value || typeof value !== 'object') return false;
  const fix = value as ProblemFix;
  if (fix.kind === 'replace') return typeof fix.text === 'string';
  if (fix.kind === 'add-samples') return true;
  return fix.kind === 'create-function' && typeof fix.name === 'string' && /^[\w$]+$/.test(fix.name);
}
