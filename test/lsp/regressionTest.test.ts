// "Copy failing case as a regression test": the snippet, run for real, must fail on the buggy
// backward it was made from and pass once the backward is fixed. The verdicts and recorded
// inputs come from the real Checker (discovery, sandbox, engine) on the LSP fixtures.

import assert from 'node:assert/strict';
import * as esbuild from 'esbuild';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Checker } from '../../server/src/core/checker';
import { discoverOps } from '../../server/src/discovery/index';
import { DEFAULT_SETTINGS } from '../../server/src/engine/settings';
import { regressionTestFor } from '../../server/src/lsp/regressionTest';
import { FIXTURES } from './lspSession';

/** Bundles the snippet with the module it imports from, runs it, and returns the error it threw (or undefined). */
async function runSnippet(snippet: string, moduleFile: string, names: string[], extraImports: string[] = []): Promise<Error | undefined> {
  const contents = [
    "import assert from 'node:assert/strict';",
    ...extraImports,
    `import { ${names.join(', ')} } from ${JSON.stringify(moduleFile)};`,
    'const it = (_name: string, body: () => void): void => body();',
    snippet,
  ].join('\n');
  const out = await esbuild.build({
    stdin: { contents, loader: 'ts', resolveDir: FIXTURES, sourcefile: 'snippet.ts' },
    bundle: true,
    platform: 'node',
    format: 'cjs',
    write: false,
    logLevel: 'silent',
    // A fixed copy in a temporary folder still finds the repository's packages (@tensorflow/tfjs).
    nodePaths: [join(FIXTURES, '..', '..', '..', 'node_modules')],
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

/** A copy of a fixture with one text replaced (the fix), in a fresh folder. */
function fixedCopy(name: string, from: string, to: string): string {
  const text = readFileSync(join(FIXTURES, name), 'utf8');
  return writeFixed(name, text, from, to);
}

function writeFixed(name: string, text: string, from: string, to: string): string {
  assert.ok(text.includes(from), `the fix applies to ${name}`);
  const file = join(mkdtempSync(join(tmpdir(), 'gp-fixed-')), name);
  writeFileSync(file, text.replace(from, to));
  return file;
}

describe('regression test snippet', function () {
  this.timeout(60_000);
  const checker = new Checker({ settings: DEFAULT_SETTINGS, workers: 1 });
  after(() => checker.dispose());

  /** The snippet of a fixture op's mismatch; `tolerance` is the one the engine must report having applied. */
  async function snippetFor(name: string, forward: string, tolerance = DEFAULT_SETTINGS.toleranceF64): Promise<string> {
    const file = join(FIXTURES, name);
    const op = discoverOps(file, readFileSync(file, 'utf8')).ops.find((o) => o.forward === forward)!;
    const [result] = await checker.checkFile(file, { filter: forward });
    assert.equal(result?.verdict, 'mismatch', result?.message);
    // The engine states the tolerance it judged each parameter with; the snippet uses that one.
    assert.deepEqual(
      result!.params.map((p) => p.tolerance),
      result!.params.map(() => tolerance),
    );
    const outcome = regressionTestFor(op, result!);
    assert.ok('snippet' in outcome, 'reason' in outcome ? outcome.reason : '');
    assert.ok(outcome.snippet.includes(`const tolerance = ${tolerance};`), outcome.snippet);
    return outcome.snippet;
  }

  it("reproduces a function op's mismatch and passes once the backward is fixed", async () => {
    const snippet = await snippetFor('mismatch.ts', 'growth');
    assert.match(snippet, /seed 1234/);
    const failure = await runSnippet(snippet, join(FIXTURES, 'mismatch.ts'), ['growth', 'growthBackward']);
    assert.ok(failure, 'the snippet fails on the buggy backward');
    assert.equal(failure.name, 'AssertionError');
    // d/dx e^(2x) = 2 e^(2x) (chain rule on Abramowitz & Stegun's d/dx e^x = e^x, ch. 4, from memory).
    const fixed = fixedCopy('mismatch.ts', 'dy[i]! * Math.exp(2 * v)', 'dy[i]! * 2 * Math.exp(2 * v)');
    assert.equal(await runSnippet(snippet, fixed, ['growth', 'growthBackward']), undefined);
  });

  it("reproduces a method op's field-gradient mismatch and passes once it is fixed", async () => {
    const snippet = await snippetFor('gain.ts', 'Gain.apply');
    assert.match(snippet, /const self: any = new Gain\(\);/);
    const failure = await runSnippet(snippet, join(FIXTURES, 'gain.ts'), ['Gain']);
    assert.equal(failure?.name, 'AssertionError', String(failure));
    assert.match(failure.message, /this\.scale\[\d\]/);
    // d/ds (s²·x) = 2·s·x.
    const fixed = fixedCopy('gain.ts', 'd * x[i]! * this.scale[i]!', '2 * d * x[i]! * this.scale[i]!');
    assert.equal(await runSnippet(snippet, fixed, ['Gain']), undefined);
  });

  it('reproduces a mismatch in a gradient the backward leaves in a field (@gradientField) and passes once it is fixed', async () => {
    const name = '../realcode/gradfields/layers.ts';
    const snippet = await snippetFor(name, 'LinearTransposed.forward');
    // The field is zeroed before the call and read after it, as the check does.
    assert.match(snippet, /self\.dW = zero\(self\.dW\);/);
    assert.match(snippet, /const analytic = flat\(self\.dW\)\[\d\];/);
    const failure = await runSnippet(snippet, join(FIXTURES, name), ['LinearTransposed']);
    assert.equal(failure?.name, 'AssertionError', String(failure));
    assert.match(failure.message, /this\.W\[\d, \d\]/);
    // The fix: W[o][i] sits at row-major index o·nIn + i, the layout the forward reads.
    const text = readFileSync(join(FIXTURES, name), 'utf8');
    const fixed = writeFixed('layers.ts', text, 'this.dW[i * this.nOut + o]', 'this.dW[o * this.nIn + i]');
    assert.equal(await runSnippet(snippet, fixed, ['LinearTransposed']), undefined);
  });

  it("reproduces a tf.customGrad op's mismatch through the library gradient and passes once it is fixed", async () => {
    const name = '../sandbox/tensor/customGrad.ts';
    const snippet = await snippetFor(name, 'doubledVentLimit', DEFAULT_SETTINGS.toleranceF32);
    assert.match(snippet, /tf\.grads\(f\)/);
    const tf = ["import * as tf from '@tensorflow/tfjs';"];
    const failure = await runSnippet(snippet, join(FIXTURES, name), ['doubledVentLimit'], tf);
    assert.equal(failure?.name, 'AssertionError', String(failure));
    assert.match(failure.message, /opening\[\d\]/);
    // tanh' = 1 − tanh² (handbook identity): drop the doubling.
    const text = readFileSync(join(FIXTURES, name), 'utf8');
    const fixed = writeFixed('customGrad.ts', text, 'tf.mul(2, tf.mul(dy,', 'tf.mul(1, tf.mul(dy,');
    assert.equal(await runSnippet(snippet, fixed, ['doubledVentLimit'], tf), undefined);
  });

  it("reproduces a hand-written tensor backward's mismatch with tensors in and out", async () => {
    const name = '../sandbox/tensor/customGrad.ts';
    const snippet = await snippetFor(name, 'shadeWarmth', DEFAULT_SETTINGS.toleranceF32);
    const tf = ["import * as tf from '@tensorflow/tfjs';"];
    const names = ['shadeWarmth', 'shadeWarmthBackward'];
    const failure = await runSnippet(snippet, join(FIXTURES, name), names, tf);
    assert.equal(failure?.name, 'AssertionError', String(failure));
    assert.match(failure.message, /shade\[\d\]/);
    // σ'(s) = σ(s)(1 − σ(s)) (handbook identity).
    const text = readFileSync(join(FIXTURES, name), 'utf8');
    const fixed = writeFixed('customGrad.ts', text, 'tf.mul(s, tf.add(1, s))', 'tf.mul(s, tf.sub(1, s))');
    assert.equal(await runSnippet(snippet, fixed, names, tf), undefined);
  });
});
