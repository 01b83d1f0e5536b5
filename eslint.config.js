// Lint rules: TypeScript recommended, plus the layering of docs/design.md: app/ is runtime-free and may
// import nothing from main/ or renderer/, nor any Node built-in; renderer/ imports only app/; inside main/
// each floor imports only from the floors below it.
import js from '@eslint/js';
import tseslint from 'typescript-eslint';
import { builtinModules } from 'node:module';

// Every Node built-in, from Node itself, so none can slip into app/.
const nodeBuiltins = builtinModules.filter((m) => !m.startsWith('_'));

// main/'s floors, bottom to top: each may import only from the floors below it (and app/). paths.ts at the
// root of main/ is the ground floor every floor may use.
const FLOORS = ['sim', 'sources', 'live', 'store', 'sheet', 'service', 'shells'];
const HOUSE = 'see docs/design.md § The house';

/** The rule for one floor: no import of a floor above it, however many folders up the path climbs. */
function floorRule(floor) {
  const i = FLOORS.indexOf(floor);
  const above = FLOORS.slice(i + 1);
  const patterns = [
    {
      regex: '^(\\.\\./)+renderer(/|$)',
      message: `main/ talks to renderer/ only through the service contract: ${HOUSE}.`,
    },
  ];
  if (above.length)
    patterns.push({
      regex: `^(\\.\\./)+(${above.join('|')})(/|$)`,
      message: `main/${floor}/ may import only from the floors below it (${FLOORS.slice(0, i).join(', ') || 'none'}), app/ and main/paths.ts: ${HOUSE}.`,
    });
  // Above the store, its connection is out of reach: every SQL statement lives in main/store/.
  if (i > FLOORS.indexOf('store'))
    patterns.push({
      regex: '(^|/)store/connection$',
      message: `only main/store/ opens the database connection; add a repository method there: ${HOUSE}.`,
    });
  return [{ files: [`main/${floor}/**/*.ts`], rules: { 'no-restricted-imports': ['error', { patterns }] } }];
}

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
            .map((name) => ({ name, message: `app/ is runtime-free: no Node built-ins (${HOUSE}).` })),
          patterns: [
            {
              group: ['**/main/**', '../main', '../../main', '**/renderer/**', '../renderer'],
              message: `app/ must not import from main/ or renderer/: ${HOUSE}.`,
            },
            {
              group: ['node:*'],
              message: `app/ is runtime-free: no Node built-ins (${HOUSE}).`,
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
              message: `renderer/ talks to main/ only through the API client: ${HOUSE}.`,
            },
          ],
        },
      ],
    },
  },
  ...FLOORS.flatMap(floorRule),
  {
    files: ['**/*.js', '**/*.mjs', '**/*.cjs'],
    languageOptions: {
      globals: { process: 'readonly', console: 'readonly', URL: 'readonly', setTimeout: 'readonly' },
    },
  },
);
