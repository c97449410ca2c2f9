// The fix a reported annotation problem admits, as data carried on its diagnostic: a
// did-you-mean replacement, "add the missing @sample lines", or "create the missing function".
// A problem's own `fix` field wins; otherwise the fix is read from discovery's wording.

import type { Problem, ProblemFix } from '../model/types';

/** `did you mean @backward?` or `did you mean 'weight'?` at the end of a message. */
const DID_YOU_MEAN = /did you mean (@?)'?([\w$.]+)'?\?/;
const MISSING_SAMPLE = /parameter '[\w$]+' has no @sample/;
const MISSING_FUNCTION = /(?:^|: )(?:backward|jacobian|tangent|hessian) '([\w$]+)' not found/;

export function fixOf(problem: Problem): ProblemFix | undefined {
  if (problem.fix) return problem.fix;
  return fixFromMessage(problem.message);
}

export function fixFromMessage(message: string): ProblemFix | undefined {
  return fixesFromMessage(message)[0];
}

/** Every fix the wording admits, the likeliest first: a misspelt backward can be renamed or created. */
export function fixesFromMessage(message: string): ProblemFix[] {
  const out: ProblemFix[] = [];
  const mean = DID_YOU_MEAN.exec(message);
  if (mean) out.push({ kind: 'replace', text: `${mean[1]}${mean[2]}` });
  if (MISSING_SAMPLE.test(message)) out.push({ kind: 'add-samples' });
  const missing = MISSING_FUNCTION.exec(message);
  if (missing) out.push({ kind: 'create-function', name: missing[1]! });
  return out;
}

/** Reads the fix back from a diagnostic's `data` (the client returns it unchanged). */
export function fixFromData(data: unknown): ProblemFix | undefined {
  if (!data || typeof data !== 'object') return undefined;
  const fix = (data as { fix?: unknown }).fix as ProblemFix | undefined;
  if (!fix || typeof fix !== 'object') return undefined;
  if (fix.kind === 'replace' && typeof fix.text === 'string') return fix;
  if (fix.kind === 'add-samples') return fix;
  if (fix.kind === 'create-function' && typeof fix.name === 'string' && /^[\w$]+$/.test(fix.name)) return fix;
  return undefined;
}
