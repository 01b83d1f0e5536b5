// Lint rules: TypeScript recommended, plus the layering rule of DESIGN.md:
// app/ is runtime-free and may import nothing from main/ or renderer/, nor Node built-ins.
import js from '@eslint/js';
import tseslint from 'typescript-eslint';

const nodeBuiltins = [
  'fs',
  'path',
  'os',
  'child_process',
  'net',
  'http',
  'crypto',
  'worker_threads',
  'stream',
  'url',
  'util',
  'events',
];

export default tseslint.config(
  { ignores: ['node_modules/**', 'dist/**', 'build/**', 'test-artifacts/**'] },
  js.configs.recommended,
  ...tseslint.configs.recommended,
  {
    rules: {
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_' }],
    },
  },
  {
    files: ['app/**/*.ts'],
    rules: {
      'no-restricted-imports': [
        'error',
        {
          // Exact names: a pattern "path" would also catch our own "./path" module.
          paths: nodeBuiltins
            .flatMap((m) => [m, `node:${m}`])
            .map((name) => ({ name, message: 'app/ is runtime-free: no Node built-ins.' })),
          patterns: [
            {
              group: ['**/main/**', '../main', '../../main', '**/renderer/**', '../renderer'],
              message: 'app/ must not import from main/ or renderer/ (see DESIGN.md).',
            },
            {
              group: ['node:*'],
              message: 'app/ is runtime-free: no Node built-ins.',
            },
          ],
        },
      ],
    },
  },
  {
    files: ['renderer/**/*.ts'],
    rules: {
      'no-restricted-imports': [
        'error',
        {
          patterns: [
            {
              group: ['**/main/**', '../main', '../../main'],
              message: 'renderer/ talks to main/ only through the API client.',
            },
          ],
        },
      ],
    },
  },
  {
    files: ['**/*.js', '**/*.mjs', '**/*.cjs'],
    languageOptions: {
      globals: { process: 'readonly', console: 'readonly', URL: 'readonly', setTimeout: 'readonly' },
    },
  },
);
