// Lint rules: the type-aware ones catch promises nobody awaits (a check whose failure would vanish);
// the engine's own rule keeps user code from steering the check (see "The engine rule" below);
// the layering map keeps each folder to the imports DEVELOPERS.md's table allows.
import tseslint from 'typescript-eslint';

// ---- The engine rule -------------------------------------------------------------------------
// server/src/engine runs in the same vm context as the user's module, after it loaded, so user
// code may have replaced Array.prototype methods, the array iterator, or globals such as
// Float64Array or JSON. The engine therefore uses only what builtins.ts captured when the engine
// loaded, and indexed loops. Enforced by syntax:
// - no `for ... of`, no array destructuring and no spread into arrays or calls (each runs the
//   array iterator, Array.prototype[Symbol.iterator]);
// - no call of an Array.prototype (or String.prototype) method by name. The rule cannot see
//   types, so the names are those of Array.prototype and String.prototype methods; typed arrays
//   share most of them (and their prototypes can be patched too), so they are banned for typed
//   arrays as well. `set` is left out on purpose: ParamSlot.set is the engine's own method.
// - no use of a global constructor, namespace or function (Math, JSON, Object, Float64Array,
//   String(...), ...) outside builtins.ts, which captures them, and sandboxEntry.ts, which runs
//   before any user code.
// test/hostile/arrayPatches.test.ts patches these in an op's module and expects correct verdicts.
const ARRAY_AND_STRING_METHODS = [
  'at',
  'concat',
  'copyWithin',
  'entries',
  'every',
  'fill',
  'filter',
  'find',
  'findIndex',
  'findLast',
  'findLastIndex',
  'flat',
  'flatMap',
  'forEach',
  'includes',
  'indexOf',
  'join',
  'keys',
  'lastIndexOf',
  'map',
  'pop',
  'push',
  'reduce',
  'reduceRight',
  'reverse',
  'shift',
  'slice',
  'some',
  'sort',
  'splice',
  'subarray',
  'toReversed',
  'toSorted',
  'toSpliced',
  'unshift',
  'values',
  'with',
  'endsWith',
  'padEnd',
  'padStart',
  'repeat',
  'replace',
  'replaceAll',
  'split',
  'startsWith',
  'toFixed',
  'toPrecision',
  'toString',
  'trim',
];
const ENGINE_GLOBALS = [
  'Array',
  'ArrayBuffer',
  'Boolean',
  'DataView',
  'Date',
  'Error',
  'Float32Array',
  'Float64Array',
  'Int8Array',
  'Int16Array',
  'Int32Array',
  'JSON',
  'Map',
  'Math',
  'Number',
  'Object',
  'Promise',
  'Proxy',
  'Reflect',
  'RegExp',
  'Set',
  'String',
  'Symbol',
  'Uint8Array',
  'Uint16Array',
  'Uint32Array',
  'WeakMap',
  'WeakSet',
  'globalThis',
  'isFinite',
  'isNaN',
  'parseFloat',
  'parseInt',
];
const ENGINE_SYNTAX = [
  { selector: 'ForOfStatement', message: 'No for...of in the engine: it runs the array iterator, which user code may replace. Use an indexed loop.' },
  { selector: 'ArrayPattern', message: 'No array destructuring in the engine: it runs the array iterator, which user code may replace. Read by index.' },
  {
    selector: 'ArrayExpression > SpreadElement, CallExpression > SpreadElement, NewExpression > SpreadElement',
    message: 'No spread in the engine: it runs the array iterator, which user code may replace. Copy with an indexed loop.',
  },
  {
    selector: `CallExpression > MemberExpression.callee[computed=false] > Identifier.property[name=/^(${ARRAY_AND_STRING_METHODS.join('|')})$/]`,
    message: 'No Array.prototype/String.prototype methods in the engine: user code may replace them. Use an indexed loop or a helper from builtins.ts.',
  },
];
const ENGINE_GLOBAL_SYNTAX = [
  {
    selector: `NewExpression > Identifier.callee[name=/^(${ENGINE_GLOBALS.join('|')})$/], CallExpression > Identifier.callee[name=/^(${ENGINE_GLOBALS.join('|')})$/], MemberExpression > Identifier.object[name=/^(${ENGINE_GLOBALS.join('|')})$/]`,
    message: 'No globals in the engine outside builtins.ts: user code may replace them. Use the copy builtins.ts captured (F64, I32, U8, max, stringifyJson, ...).',
  },
];

// ---- Layering -------------------------------------------------------------------------------
// DEVELOPERS.md's layering table, enforced: which server/src folders each folder may import.
// Type-only imports count too. Change the table and this map together.
const SERVER_FOLDERS = ['model', 'engine', 'text', 'present', 'discovery', 'sandbox', 'core', 'project', 'cli', 'lsp'];
const MAY_IMPORT = {
  model: [],
  engine: ['model'],
  text: [],
  present: ['model'],
  discovery: ['model', 'engine', 'text'],
  sandbox: ['model', 'engine', 'discovery'], // discovery: the parser-safe text for coverage mapping (coverageBlocks.ts)
  core: ['model', 'engine', 'discovery', 'sandbox'],
  project: ['model', 'engine', 'text'],
  cli: ['model', 'engine', 'core', 'project', 'lsp', 'text', 'present'],
  lsp: ['model', 'engine', 'core', 'project', 'discovery', 'text', 'present'],
};
const EDITOR_LIBRARIES = {
  regex: '^vscode(-languageserver|-languageclient)?(/|-|$)',
  message: 'Only server/src/lsp (vscode-languageserver) and client/src (vscode, vscode-languageclient) speak to the editor.',
};

function layering(folder) {
  const forbidden = SERVER_FOLDERS.filter((f) => f !== folder && !MAY_IMPORT[folder].includes(f));
  const patterns = [];
  if (forbidden.length > 0) {
    patterns.push({
      regex: `^\\.\\./(${forbidden.join('|')})(/|$)`,
      message: `server/src/${folder} may import only ${MAY_IMPORT[folder].length ? MAY_IMPORT[folder].join(', ') : 'itself'} among the server folders (DEVELOPERS.md, layering table).`,
    });
  }
  if (folder === 'model' || folder === 'text') {
    // The model crosses into the sandbox with the engine; text is a leaf every folder may use.
    patterns.push({ regex: '^(?!\\./)', message: `server/src/${folder} imports nothing outside itself (DEVELOPERS.md, layering table).` });
  }
  if (folder === 'present') {
    // Presentation is shared with the VS Code client: itself and the shared model only, no Node.
    patterns.push({ regex: '^(?!\\./|\\.\\./model/)', message: 'server/src/present imports nothing but itself and the shared model (DEVELOPERS.md, layering table).' });
  }
  if (folder === 'engine') {
    // The engine is bundled and evaluated inside the sandbox: itself and the shared model only.
    patterns.push({ regex: '^(?!\\./|\\.\\./model/)', message: 'server/src/engine imports nothing but itself and the shared model (DEVELOPERS.md, layering table).' });
  }
  if (folder === 'cli') {
    // `gradient-probe lsp` starts the language server; nothing else of it belongs to the CLI.
    patterns.push({ regex: '^\\.\\./lsp/(?!server$)', message: 'server/src/cli reaches the language server only through lsp/server (the `lsp` subcommand).' });
  }
  if (folder === 'lsp') {
    patterns.push({ regex: '^vscode(-languageclient)?(/|$)', message: 'The language server speaks LSP (vscode-languageserver), not the editor API.' });
  } else {
    patterns.push(EDITOR_LIBRARIES);
  }
  return { files: [`server/src/${folder}/**/*.ts`], rules: { 'no-restricted-imports': ['error', { patterns }] } };
}

const CLIENT_LAYERING = {
  files: ['client/src/**/*.ts'],
  rules: {
    'no-restricted-imports': [
      'error',
      {
        patterns: [
          {
            regex: '^(\\.\\./)+server/src/(?!model/types$|lsp/protocol$|present/format$)',
            message:
              'client/src shares only the data shapes (server/src/model/types), the custom messages (server/src/lsp/protocol) and the presentation of figures (server/src/present/format) with the server; everything else goes over LSP.',
          },
          { regex: '^vscode-languageserver', message: 'The client uses vscode-languageclient; the server side of LSP stays in server/src/lsp.' },
        ],
      },
    ],
  },
};

export default tseslint.config(
  {
    ignores: [
      'tmp/**',
      '**/*.mjs',
      'dist/**',
      'node_modules/**',
      'test/corpus/**',
      'test/fixtures/**',
      'test/outside/**',
      'examples/**',
      '.editor-host/**',
      'bench/results/**',
      '*.mjs',
      'bin/**',
    ],
  },
  ...tseslint.configs.recommended,
  {
    files: ['**/*.ts'],
    languageOptions: { parserOptions: { projectService: true, tsconfigRootDir: import.meta.dirname } },
    rules: {
      '@typescript-eslint/no-floating-promises': 'error',
      '@typescript-eslint/no-explicit-any': 'off',
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_' }],
    },
  },
  {
    files: ['server/src/engine/**/*.ts'],
    ignores: ['server/src/engine/builtins.ts', 'server/src/engine/sandboxEntry.ts'],
    rules: { 'no-restricted-syntax': ['error', ...ENGINE_SYNTAX, ...ENGINE_GLOBAL_SYNTAX] },
  },
  {
    files: ['server/src/engine/builtins.ts', 'server/src/engine/sandboxEntry.ts'],
    rules: { 'no-restricted-syntax': ['error', ...ENGINE_SYNTAX] },
  },
  ...SERVER_FOLDERS.map(layering),
  CLIENT_LAYERING,
);
