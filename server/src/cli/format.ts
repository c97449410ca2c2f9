// Text safe for a terminal. Figures (relative errors, values, indices, times) are formatted by
// the one presentation module every surface shares, server/src/present/format.ts.

/** Removes terminal escape sequences and control characters (user output must not steer the terminal). */
export function stripControl(text: string): string {
  return text.replace(/\x1b\[[0-9;?]*[ -/]*[@-~]/g, '').replace(/[\x00-\x08\x0b-\x1f\x7f]/g, '');
}
