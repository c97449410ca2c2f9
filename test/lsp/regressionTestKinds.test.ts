// "Copy failing case as a regression test" for @jacobian, @tangent and @hessian ops: the
// snippet, run for real, fails on the wrong derivative it was made from and passes once the
// derivative is fixed. Verdicts and inputs come from the real Checker.

import assert from 'node:assert/strict';
import * as esbuild from 'esbuild';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Checker } from '../../server/src/core/checker';
import { discoverOps } from '../../server/src/discovery/index';
import { DEFAULT_SETTINGS } from '../../server/src/engine/settings';
import { regressionTestFor } from '../../server/src/lsp/regressionTest';
import { repoRoot } from './lspSession';

const FIXTURE = join(repoRoot(), 'test', 'fixtures', 'kinds', 'arm.ts');
const HVP_FIXTURE = join(repoRoot(), 'test', 'fixtures', 'kinds', 'hvp.ts');

async function runSnippet(snippet: string, moduleFile: string, names: string[]): Promise<Error | undefined> {
  const contents = [
    "import assert from 'node:assert/strict';",
    `import { ${names.join(', ')} } from ${JSON.stringify(moduleFile)};`,
    'const it = (_name: string, body: () => void): void => body();',
    snippet,
  ].join('\n');
  const out = await esbuild.build({
    stdin: { contents, loader: 'ts', resolveDir: join(repoRoot(), 'test', 'fixtures', 'kinds'), sourcefile: 'snippet.ts' },
    bundle: true,
    platform: 'node',
    format: 'cjs',
    write: false,
    logLevel: 'silent',
  });
  const file = join(mkdtempSync(join(tmpdir(), 'gp-snippet-')), 'snippet.cjs');
  writeFileSync(file, out.outputFiles[0]!.text);
  try {
    // eslint-disable-next-line @typescript-eslint/no-require-imports
    require(file);
    return undefined;
  } catch (err) {
    return err as Error;
  }
}

describe('regression test snippet for the derivative kinds', function () {
  this.timeout(60_000);
  const checker = new Checker({ settings: DEFAULT_SETTINGS, workers: 1 });
  after(() => checker.dispose());

  const cases = [
    { forward: 'link @jacobian', names: ['link', 'linkJacobian'], from: '+ 0.7 * c12', to: '+ 0.8 * c12', failure: /J\[1, 0\]: jacobian/ },
    { forward: 'link @tangent', names: ['link', 'linkTangent'], from: '+ 0.0 * c12', to: '+ 0.8 * c12', failure: /output 1: tangent/ },
    { forward: 'bowl @hessian', names: ['bowl', 'bowlHessian'], from: '[1.5, Math', to: '[1, Math', failure: /H\[1, 0\]: hessian/ },
    // The Hessian-vector product form ($v), over two parameters (v is an array of parts).
    { forward: 'ridge @hessian', names: ['ridge', 'ridgeHvp'], from: '0.5 * v[1][0]', to: 'v[1][0]', failure: /\(H·v\)\[\d\]: hessian/, fixture: HVP_FIXTURE },
  ];
  for (const c of cases) {
    it(`${c.forward}: the snippet fails on the wrong derivative and passes once it is fixed`, async () => {
      const fixture = c.fixture ?? FIXTURE;
      const text = readFileSync(fixture, 'utf8');
      const op = discoverOps(fixture, text).ops.find((o) => o.forward === c.forward)!;
      const results = await checker.checkFile(fixture, { filter: c.forward });
      const result = results.find((r) => r.forward === c.forward)!;
      assert.equal(result.verdict, 'mismatch', result.message);
      const outcome = regressionTestFor(op, result);
      assert.ok('snippet' in outcome, 'reason' in outcome ? outcome.reason : '');
      const failed = await runSnippet(outcome.snippet, fixture, c.names);
      assert.ok(failed, `the snippet passed on the wrong ${c.forward}:\n${outcome.snippet}`);
      assert.match(failed.message, c.failure, outcome.snippet);
      const fixed = join(mkdtempSync(join(tmpdir(), 'gp-fixed-')), 'fixed.ts');
      assert.ok(text.includes(c.from));
      writeFileSync(fixed, text.replace(c.from, c.to));
      const after = await runSnippet(outcome.snippet, fixed, c.names);
      assert.equal(after, undefined, `the snippet fails on the fixed ${c.forward}: ${after?.message}\n${outcome.snippet}`);
    });
  }
});
