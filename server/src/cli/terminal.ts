// Whether human output gets colour: asked for, or a terminal that has not opted out
// (the NO_COLOR convention: set and non-empty means no colour; TERM=dumb has none).

import type { ColorMode } from './args';

export function shouldUseColor(mode: ColorMode, isTTY: boolean, env: Record<string, string | undefined>): boolean {
  if (mode === 'always') return true;
  if (mode === 'never') return false;
  if (env['NO_COLOR'] !== undefined && env['NO_COLOR'] !== '') return false;
  if (env['TERM'] === 'dumb') return false;
  return isTTY;
}
