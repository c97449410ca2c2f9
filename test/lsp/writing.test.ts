// Unit tests of the writing features as pure functions (completion, quick fixes, definitions,
// tag hovers, spec guesses) on the fixture test/fixtures/lsp-writing/vents.ts. The same
// features through the real server are in writingServer.test.ts.

import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import ts from 'typescript';
import type { CodeAction, CompletionItem, TextEdit } from 'vscode-languageserver';
import { discoverOps } from '../../server/src/discovery/index';
import { codeActionsFor } from '../../server/src/lsp/codeActions';
import { completionsAt } from '../../server/src/lsp/completion';
import { definitionAt } from '../../server/src/lsp/definition';
import { diagnosticsFor } from '../../server/src/lsp/diagnostics';
import type { DocumentFacts } from '../../server/src/lsp/documentFacts';
import { specFromType } from '../../server/src/lsp/specGuess';
import { tagHoverAt } from '../../server/src/lsp/tagHover';
import { repoRoot } from './lspSession';

const FILE = join(repoRoot(), 'test', 'fixtures', 'lsp-writing', 'vents.ts');
const URI = pathToFileURL(FILE).toString();
const ORIGINAL = readFileSync(FILE, 'utf8');

/** 0-based position just after `needle` (plus `delta` characters) in `text`. */
function after(text: string, needle: string, delta = 0): { line: number; character: number } {
  const i = text.indexOf(needle);
  assert.ok(i >= 0, `"${needle}" not found`);
  const at = i + needle.length + delta;
  const before = text.slice(0, at);
  return { line: before.split('\n').length - 1, character: at - before.lastIndexOf('\n') - 1 };
}

function newText(item: CompletionItem): string {
  return item.textEdit && 'newText' in item.textEdit ? item.textEdit.newText : String(item.insertText ?? item.label);
}

/** Applies one code action's edits to the text (edits of one file, applied from the end). */
function applyAction(text: string, action: CodeAction): string {
  const edits = [...(action.edit?.changes?.[URI] ?? [])] as TextEdit[];
  const lines = text.split('\n');
  const offset = (p: { line: number; character: number }): number => lines.slice(0, p.line).reduce((n, l) => n + l.length + 1, 0) + p.character;
  edits.sort((a, b) => offset(b.range.start) - offset(a.range.start));
  let out = text;
  for (const e of edits) out = out.slice(0, offset(e.range.start)) + e.newText + out.slice(offset(e.range.end));
  return out;
}

function factsOf(text: string): DocumentFacts {
  const ops = discoverOps(FILE, text).ops;
  return { snapshot: { uri: URI, fsPath: FILE, text, lines: text.split('\n'), ops }, trusted: true, isolated: false, latest: () => undefined, isRunning: () => false };
}

function actionsFor(text: string, messagePart: string): CodeAction[] {
  const facts = factsOf(text);
  const diagnostics = diagnosticsFor(facts);
  const d = diagnostics.find((x) => String(x.message).includes(messagePart));
  assert.ok(d, `no diagnostic mentioning "${messagePart}" in ${diagnostics.map((x) => x.message).join(' | ')}`);
  return codeActionsFor({ uri: URI, fileName: FILE, text, ops: facts.snapshot.ops, range: d.range, diagnostics: [d] });
}

describe('writing features: completion', () => {
  it('offers our tag names after @, including the derivative kinds', () => {
    const text = ORIGINAL.replace(' * @sample temp num in [5, 30]\n', ' * @sample temp num in [5, 30]\n * @\n');
    const labels = completionsAt(FILE, text, after(text, ' * @sample temp num in [5, 30]\n * @')).map((c) => c.label);
    for (const tag of ['@backward', '@sample', '@samples', '@fixed', '@construct', '@gradientField', '@tolerance', '@seed', '@jacobian', '@tangent', '@hessian'])
      assert.ok(labels.includes(tag), `${tag} missing from ${labels.join(', ')}`);
  });

  it('offers nothing outside a JSDoc block', () => {
    assert.deepEqual(completionsAt(FILE, ORIGINAL, after(ORIGINAL, 'return temp')), []);
  });

  it('after @sample offers only the parameters still without a sample, with specs from their types', () => {
    const text = ORIGINAL.replace(' * @sample temp num in [5, 30]\n', ' * @sample temp num in [5, 30]\n * @sample \n');
    const items = completionsAt(FILE, text, after(text, ' * @sample \n', -1));
    assert.deepEqual(
      items.map((c) => c.label),
      ['humidity', 'pane'],
    );
    // number[][] has no sizes in its type (placeholders); a 3-tuple says its length.
    assert.equal(newText(items[0]!), 'humidity num[${1:4}, ${2:4}]');
    assert.equal(newText(items[1]!), 'pane num[${1:3}]');
  });

  it('after @sample in a method offers the class fields as this.NAME', () => {
    const text = ORIGINAL.replace('   * @sample x f64[3]\n', '   * @sample x f64[3]\n   * @sample \n');
    const items = completionsAt(FILE, text, after(text, '   * @sample \n', -1));
    assert.deepEqual(
      items.map((c) => c.label),
      ['this.speed', 'this.blades'],
    );
    // Sizes from the initializers: `0.5` is a number, `new Float64Array(3)` has three elements.
    assert.deepEqual(items.map(newText), ['this.speed num', 'this.blades f64[${1:3}]']);
  });

  it('after a parameter name offers the guessed spec first, then the spec forms', () => {
    const text = ORIGINAL.replace(' * @sample temp num in [5, 30]\n', ' * @sample temp num in [5, 30]\n * @sample humidity \n');
    const items = completionsAt(FILE, text, after(text, ' * @sample humidity \n', -1));
    assert.equal(items[0]!.label, 'num[4, 4]');
    assert.equal(items[0]!.preselect, true);
    for (const form of ['f64[…]', 'f32[…]', 'num', 'int', '= JSON'])
      assert.ok(
        items.some((c) => c.label === form),
        form,
      );
  });

  it('after @backward offers the functions whose parameters fit the default call first', () => {
    const text = ORIGINAL.replace('@backward airflowBackward', '@backward ');
    const items = completionsAt(FILE, text, after(text, ' * @backward '));
    const sorted = [...items].sort((a, b) => a.sortText!.localeCompare(b.sortText!)).map((c) => c.label);
    // airflow(opening) is called back as (opening, $dy): two parameters fit, and the name that
    // mentions the forward comes first; the forward itself is not offered.
    assert.equal(sorted[0], 'airflowBackward');
    assert.ok(!sorted.includes('airflow'));
    const condensation = items.find((c) => c.label === 'condensation');
    assert.ok(condensation && condensation.sortText!.startsWith('1'), 'a three-parameter function does not fit the default two-argument call');
  });

  it('after @backward on a method offers the methods of the class', () => {
    const text = ORIGINAL.replace('   * @backward\n', '   * @backward \n');
    const items = completionsAt(FILE, text, after(text, '   * @backward '));
    const best = [...items].sort((a, b) => a.sortText!.localeCompare(b.sortText!))[0]!;
    assert.equal(best.label, 'spinBackward');
    assert.ok(!items.some((c) => c.label === 'spin' && c.detail?.startsWith('method')));
  });

  it('inside the argument list offers parameter names and the placeholders not yet listed', () => {
    const text = ORIGINAL.replace('@backward airflowBackward', '@backward airflowBackward(opening, ');
    const labels = completionsAt(FILE, text, after(text, '@backward airflowBackward(opening, ')).map((c) => c.label);
    assert.deepEqual(labels.sort(), ['$dy', '$y']);
  });

  it('after @construct offers the module functions', () => {
    const text = ORIGINAL.replace('@construct makeFan', '@construct ');
    assert.ok(completionsAt(FILE, text, after(text, '@construct ')).some((c) => c.label === 'makeFan'));
  });
});

describe('writing features: quick fixes', () => {
  it('applies the did-you-mean of a misspelt tag', () => {
    const [action] = actionsFor(ORIGINAL, 'unknown tag @bakward');
    assert.ok(action);
    const fixed = applyAction(ORIGINAL, action);
    assert.ok(fixed.includes(' * @backward mistBackward\n'));
    assert.equal(discoverOps(FILE, fixed).ops.find((o) => o.forward === 'mist')!.problems.length, 0);
  });

  it('adds @sample lines for every unsampled parameter, and the op then has no sampling problem', () => {
    const actions = actionsFor(ORIGINAL, "parameter 'humidity' has no @sample");
    const add = actions.find((a) => a.title.startsWith('Add @sample'));
    assert.ok(add, actions.map((a) => a.title).join(' | '));
    const fixed = applyAction(ORIGINAL, add);
    assert.ok(fixed.includes(' * @sample humidity num[4, 4]\n * @sample pane num[3]\n */'));
    const op = discoverOps(FILE, fixed).ops.find((o) => o.forward === 'condensation')!;
    assert.deepEqual(
      op.problems.filter((p) => p.message.includes('no @sample')),
      [],
    );
  });

  it('creates the missing backward with the signature the check calls, which discovery then resolves', () => {
    const withSamples = ORIGINAL.replace(' * @sample temp num in [5, 30]\n', ' * @sample temp num in [5, 30]\n * @sample humidity num[2, 2] fixed\n * @sample pane num[3] fixed\n');
    const create = actionsFor(withSamples, "backward 'condensationBackward' not found").find((a) => a.title.startsWith('Create'));
    assert.ok(create);
    const fixed = applyAction(withSamples, create);
    // Default call: every forward parameter, then $dy (shaped like the number output); only temp is differentiated.
    assert.ok(fixed.includes('export function condensationBackward(temp: number, humidity: number[][], pane: [number, number, number], dy: number): number {'), fixed);
    const op = discoverOps(FILE, fixed).ops.find((o) => o.forward === 'condensation')!;
    assert.deepEqual(op.problems, []);
    // The stub is valid TypeScript.
    const sf = ts.createSourceFile('x.ts', fixed, ts.ScriptTarget.Latest, true);
    assert.deepEqual((sf as unknown as { parseDiagnostics: unknown[] }).parseDiagnostics, []);
  });

  it('creates a missing backward of a method op as a method taking $dy and returning every sampled gradient', () => {
    const text = ORIGINAL.replace('   * @backward\n   * @sample x f64[3]\n', '   * @backward turnBackward\n   * @sample x f64[3]\n   * @sample this.speed num\n');
    const create = actionsFor(text, "backward 'turnBackward' not found").find((a) => a.title === "Create method 'turnBackward'");
    assert.ok(create);
    const fixed = applyAction(text, create);
    // Inside the class, after the method, in the class body's indentation; a method op's default call is (dy).
    assert.ok(fixed.includes('  }\n\n  turnBackward(dy: Float64Array): { x: Float64Array; speed: number } {\n    // The gradient'), fixed);
    assert.deepEqual(discoverOps(FILE, fixed).ops.find((o) => o.forward === 'Fan.spin')!.problems, []);
  });

  it('offers both renaming a misspelt backward and creating it', () => {
    const text = ORIGINAL.replace('@backward airflowBackward', '@backward airflowBakward');
    const titles = actionsFor(text, "backward 'airflowBakward' not found").map((a) => a.title);
    assert.deepEqual(titles, ["Change to 'airflowBackward'", "Create function 'airflowBakward'"]);
    const fixed = applyAction(text, actionsFor(text, "backward 'airflowBakward' not found")[0]!);
    assert.deepEqual(discoverOps(FILE, fixed).ops.find((o) => o.forward === 'airflow')!.problems, []);
  });

  it('annotates an exported function with numeric parameters as an op', () => {
    const facts = factsOf(ORIGINAL);
    const at = after(ORIGINAL, 'export function sha');
    const actions = codeActionsFor({ uri: URI, fileName: FILE, text: ORIGINAL, ops: facts.snapshot.ops, range: { start: at, end: at }, diagnostics: [] });
    const annotate = actions.find((a) => a.title === "Annotate 'shade' as a gradient op");
    assert.ok(annotate);
    const fixed = applyAction(ORIGINAL, annotate);
    assert.ok(fixed.includes('/**\n * @backward shadeBackward\n * @sample light f32[8]\n * @sample cover num\n */\nexport function shade('));
    const op = discoverOps(FILE, fixed).ops.find((o) => o.forward === 'shade')!;
    assert.deepEqual(
      op.params.map((p) => p.name),
      ['light', 'cover'],
    );
    // Only the backward is missing now, and it has its own quick fix.
    assert.deepEqual(
      op.problems.map((p) => p.fixes),
      [[{ kind: 'create-function', name: 'shadeBackward' }]],
    );
  });

  it('annotates an exported const bound to an arrow function above its statement', () => {
    const text = `${ORIGINAL}\nexport const dim = (level: number, lamps: Float64Array = new Float64Array(5)): Float64Array => lamps.map((v) => v * level);\n`;
    const at = after(text, 'export const di');
    const actions = codeActionsFor({ uri: URI, fileName: FILE, text, ops: factsOf(text).snapshot.ops, range: { start: at, end: at }, diagnostics: [] });
    const annotate = actions.find((a) => a.title === "Annotate 'dim' as a gradient op");
    assert.ok(annotate);
    const fixed = applyAction(text, annotate);
    // The default value tells the size: new Float64Array(5).
    assert.ok(fixed.includes('/**\n * @backward dimBackward\n * @sample level num\n * @sample lamps f64[5]\n */\nexport const dim ='), fixed.slice(-400));
    assert.deepEqual(
      discoverOps(FILE, fixed)
        .ops.find((o) => o.forward === 'dim')!
        .params.map((p) => p.sample?.kind),
      ['random', 'random'],
    );
  });

  it('offers no annotation on a function that already is an op', () => {
    const facts = factsOf(ORIGINAL);
    const at = after(ORIGINAL, 'export function airf');
    const actions = codeActionsFor({ uri: URI, fileName: FILE, text: ORIGINAL, ops: facts.snapshot.ops, range: { start: at, end: at }, diagnostics: [] });
    assert.deepEqual(actions, []);
  });
});

describe('writing features: navigation and tag hovers', () => {
  it('goes from the name after @backward to the function', () => {
    const loc = definitionAt(FILE, ORIGINAL, after(ORIGINAL, '@backward airflowBack'));
    assert.ok(loc);
    assert.deepEqual(
      loc.range.start,
      after(ORIGINAL, '\nexport function ', ORIGINAL.indexOf('airflowBackward(opening') - ORIGINAL.indexOf('\nexport function ') - '\nexport function '.length),
    );
    assert.equal(ORIGINAL.split('\n')[loc.range.start.line]!.slice(loc.range.start.character, loc.range.end.character), 'airflowBackward');
  });

  it("goes from a method op's @backward to the method, and from @jacobian to its function", () => {
    const text = ORIGINAL.replace('   * @backward\n', '   * @backward spinBackward\n').replace(
      ' * @bakward mistBackward\n',
      ' * @backward mistBackward\n * @jacobian mistBackward\n',
    );
    const method = definitionAt(FILE, text, after(text, '@backward spinBack'));
    assert.ok(method);
    assert.equal(method.range.start.line, after(text, '  spinBackward(dy').line);
    const jacobian = definitionAt(FILE, text, after(text, '@jacobian mist'));
    assert.ok(jacobian);
    assert.equal(jacobian.range.start.line, after(text, 'export function mistBackward').line);
  });

  it('goes from @construct to the factory', () => {
    const loc = definitionAt(FILE, ORIGINAL, after(ORIGINAL, '@construct make'));
    assert.ok(loc);
    assert.equal(loc.range.start.line, after(ORIGINAL, 'export function makeFan').line);
  });

  it('explains a tag on hover, in the README wording', () => {
    const hover = tagHoverAt(FILE, ORIGINAL, after(ORIGINAL, ' * @constr'));
    assert.ok(hover);
    const value = (hover.contents as { value: string }).value;
    assert.match(value, /\*\*@construct\*\* — For a method op: the function that builds the instance/);
    assert.match(value, /@construct makeSmoother/);
  });

  it('after @gradientField offers the sampled parameters, then the unsampled fields; its hover shows an example', () => {
    const text = ORIGINAL.replace('   * @construct makeFan\n', '   * @construct makeFan\n   * @sample this.blades f64[3]\n   * @gradientField \n');
    const params = completionsAt(FILE, text, after(text, '@gradientField ')).map((c) => c.label);
    assert.deepEqual(params.sort(), ['this.blades', 'x']);
    const withParam = text.replace('@gradientField \n', '@gradientField this.blades this.\n');
    const fields = completionsAt(FILE, withParam, after(withParam, '@gradientField this.blades this.')).map(newText);
    assert.deepEqual(fields, ['this.speed']);
    const hover = tagHoverAt(FILE, withParam, after(withParam, '   * @gradientF'));
    const value = (hover?.contents as { value: string } | undefined)?.value ?? '';
    assert.match(value, /\*\*@gradientField\*\* — For a method whose backward leaves a parameter's gradient on the instance/);
    assert.match(value, /@gradientField this\.W this\.dW/);
  });

  it('guesses specs from types and initializers', () => {
    const typeOf = (src: string): ts.TypeNode => {
      const sf = ts.createSourceFile('t.ts', `let v: ${src};`, ts.ScriptTarget.Latest, true);
      return (sf.statements[0] as ts.VariableStatement).declarationList.declarations[0]!.type!;
    };
    assert.equal(specFromType(typeOf('number'))?.spec, 'num');
    assert.equal(specFromType(typeOf('Float64Array'))?.spec, 'f64[8]');
    assert.equal(specFromType(typeOf('readonly number[]'))?.spec, 'num[8]');
    assert.equal(specFromType(typeOf('Array<number[]>'))?.spec, 'num[4, 4]');
    assert.equal(specFromType(typeOf('[[number, number], [number, number], [number, number]]'))?.spec, 'num[3, 2]');
    assert.equal(specFromType(typeOf('string')), undefined);
  });
});
