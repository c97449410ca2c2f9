// Path helpers shared by the file walk, the ignore rules and the reports: relative paths with
// `/` separators, whatever the platform.

import { isAbsolute, relative, sep } from 'node:path';

/** `path` with `/` separators. */
export function toSlashes(path: string): string {
  return sep === '/' ? path : path.split(sep).join('/');
}

/** `target` relative to `base` with `/`, or undefined when it is `base` itself or outside it. */
export function relativeInside(base: string, target: string): string | undefined {
  const rel = relative(base, target);
  if (rel === '' || rel === '..' || rel.startsWith('..' + sep) || isAbsolute(rel)) return undefined;
  return toSlashes(rel);
}
