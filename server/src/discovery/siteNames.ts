// How discovery names a forward in messages (`Layer.forward`, `ops.f`, `(anonymous)`); the "did
// you mean" of its messages is suggestion.ts.
import type { ForwardSite } from './forwardSites';

/** The forward's name as messages and reports show it. */
export function displayName(site: ForwardSite): string {
  const name = site.name || '(anonymous)';
  if (site.objectName !== undefined) return `${site.objectName}.${name}`;
  return site.kind === 'method' ? `${site.className || '(anonymous class)'}.${name}` : name;
}
