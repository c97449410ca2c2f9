// How discovery names a forward in messages (`Layer.forward`, `ops.f`, `(anonymous)`) and the
// one "did you mean" suffix of its messages.
import { nearestName } from '../text/nearestName';
import type { ForwardSite } from './forwardSites';

/** The forward's name as messages and reports show it. */
export function displayName(site: ForwardSite): string {
  const name = site.name || '(anonymous)';
  if (site.objectName !== undefined) return `${site.objectName}.${name}`;
  return site.kind === 'method' ? `${site.className || '(anonymous class)'}.${name}` : name;
}

/** `; did you mean 'x'?` for the nearest candidate, or ''. */
export function suggest(name: string, candidates: readonly string[]): string {
  const near = nearestName(name, candidates);
  return near ? `; did you mean '${near}'?` : '';
}
