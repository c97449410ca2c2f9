// A run log for the corpus ops (docs/code-shapes.md, "Imports"): it imports Node built-ins, as logging
// helpers do. Ops may import it; the check only fails if an op actually calls it.
import { appendFileSync } from 'node:fs';
import { join } from 'node:path';

export function logRun(op: string, size: number): void {
  appendFileSync(join('logs', 'runs.txt'), `${op} ${size}\n`);
}
