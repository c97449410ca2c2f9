// "Did you mean" for discovery's problems: the hint in the message and the quick fix that
// applies it, made together so the editor never reads the fix back out of the words.
import type { ProblemFix } from '../model/types';
import { nearestName } from '../text/nearestName';

export interface Suggestion {
  /** "; did you mean 'NAME'?", or '' when no known name is close. */
  hint: string;
  /** The replacement the hint proposes, as a quick fix (empty without a hint). */
  fixes: ProblemFix[];
}

/** The known name closest to a misspelt one, as a hint and a fix (text/nearestName.ts decides "close"). */
export function suggestName(name: string, candidates: readonly string[]): Suggestion {
  const near = nearestName(name, candidates);
  return near ? suggestionOf(near) : { hint: '', fixes: [] };
}

/** A hint and fix for a known replacement (`@backward` for a misspelt tag, `f64` for a dtype). */
export function suggestionOf(replacement: string): Suggestion {
  const shown = replacement.startsWith('@') ? replacement : `'${replacement}'`;
  return { hint: `; did you mean ${shown}?`, fixes: [{ kind: 'replace', text: replacement }] };
}

/** The `fixes` field of a problem: absent when there is none. */
export function fixesField(fixes: readonly ProblemFix[]): { fixes?: ProblemFix[] } {
  return fixes.length > 0 ? { fixes: [...fixes] } : {};
}
