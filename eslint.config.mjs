// Lint rules: the type-aware ones catch promises nobody awaits (a check whose failure would vanish).
import tseslint from 'typescript-eslint';

export default tseslint.config(
  { ignores: ['tmp/**', '**/*.mjs', 'dist/**', 'node_modules/**', 'test/corpus/**', 'test/fixtures/**', 'test/outside/**', 'examples/**', '.editor-host/**', 'bench/results/**', '*.mjs', 'bin/**'] },
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
);
