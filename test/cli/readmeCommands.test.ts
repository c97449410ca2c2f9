// The shell commands of the README and the user docs (docs/*.md) may fetch no package by a name
// this project does not own: the CLI
// is not on the registry, so `npx gradient-probe …` or `npm install gradient-probe` would ask the
// registry for someone else's package. `npx --no-install` runs only an installed copy.

import assert from 'node:assert/strict';
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { ROOT } from '../helpers/cli';

/** Lines of the README's fenced shell blocks (```sh). */
function shellLines(markdown: string): string[] {
  const lines: string[] = [];
  let inShell = false;
  for (const line of markdown.split('\n')) {
    if (/^```/.test(line)) {
      inShell = !inShell && /^```(sh|bash|shell)\s*$/.test(line);
      continue;
    }
    if (inShell) lines.push(line.replace(/#.*$/, '').trim());
  }
  return lines.filter((l) => l !== '');
}

/** Why a command line would fetch a package by name from the registry, or undefined. */
function registryFetch(line: string): string | undefined {
  for (const m of line.matchAll(/\bnpx\s+((?:--?[\w-]+(?:=\S+)?\s+)*)([^\s-]\S*)/g)) {
    if (!/--no-install\b|--offline\b/.test(m[1] ?? '')) return `npx runs "${m[2]}" and fetches it when it is not installed`;
  }
  for (const m of line.matchAll(/\bnpm\s+(?:install|i|add)\b([^;&|]*)/g)) {
    for (const arg of (m[1] ?? '').trim().split(/\s+/)) {
      if (arg === '' || arg.startsWith('-') || arg.startsWith('"') || /[/.:]/.test(arg)) continue;
      return `npm install of the bare name "${arg}"`;
    }
  }
  return undefined;
}

/** The README and every page of docs/: what a user copies commands from. */
function userDocs(): string[] {
  const pages = [join(ROOT, 'README.md')];
  for (const name of readdirSync(join(ROOT, 'docs'))) if (name.endsWith('.md')) pages.push(join(ROOT, 'docs', name));
  return pages;
}

describe('README and docs commands', () => {
  const lines = userDocs().flatMap((page) => shellLines(readFileSync(page, 'utf8')));

  it('has shell commands to look at (install, CI, merge)', () => {
    assert.ok(
      lines.some((l) => l.includes('npm pack')),
      'the tarball install',
    );
    assert.ok(
      lines.some((l) => l.includes('gradient-probe merge')),
      'the CI join',
    );
  });

  it('fetches no package by a bare name', () => {
    const bad = lines.map((l) => [l, registryFetch(l)] as const).filter(([, why]) => why !== undefined);
    assert.deepEqual(bad, []);
  });

  it('the rule itself catches the forms it forbids (so a pass means something)', () => {
    assert.ok(registryFetch('npx gradient-probe check src'));
    assert.ok(registryFetch('npm install --save-dev gradient-probe'));
    assert.equal(registryFetch('npx --no-install gradient-probe check src'), undefined);
    assert.equal(registryFetch('npm install --save-dev /path/to/gradient-probe-0.1.0.tgz'), undefined);
    assert.equal(registryFetch('npm install --save-dev "git+https://host/x/gradient-probe.git#abc"'), undefined);
  });
});
