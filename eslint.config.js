// @ts-check
import js from '@eslint/js';
import tseslint from 'typescript-eslint';

export default tseslint.config(
  { ignores: ['node_modules/', 'build/', 'dist/', 'out/', 'test-artifacts/', 'coverage/'] },
  js.configs.recommended,
  ...tseslint.configs.recommended,
  {
    rules: {
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_' }],
    },
  },
  {
    // dsp/ stays pure: no platform APIs, so it runs in a worker, in Node and in tests alike.
    files: ['dsp/**/*.ts'],
    rules: {
      'no-restricted-imports': [
        'error',
        {
          patterns: [
            {
              group: ['node:*', 'fs', 'path', 'os', 'child_process'],
              message: 'dsp/ must not use Node APIs.',
            },
            { group: ['electron', 'electron/*'], message: 'dsp/ must not use Electron.' },
            { group: ['react', 'react-dom', 'react/*', 'react-dom/*'], message: 'dsp/ must not use React.' },
            {
              group: ['**/renderer/**', '**/main/**', '**/cli/**', '**/test/**', '**/tools/**'],
              message: 'dsp/ is the bottom layer: it may not import renderer/, main/, cli/, test/ or tools/.',
            },
          ],
        },
      ],
      'no-console': 'error',
    },
  },
  {
    // main/ and cli/ may use dsp/ but not the page; the page may use dsp/ and main/'s contract, not cli/.
    files: ['main/**/*.ts', 'cli/**/*.ts'],
    // Known exception until the benchmark moves out of the shipped command line into a development tool:
    // cli/bench.ts still imports its test signals from test/.
    ignores: ['cli/bench*.ts'],
    rules: {
      'no-restricted-imports': [
        'error',
        {
          patterns: [
            { group: ['**/renderer/**'], message: 'main/ and cli/ may not import the renderer.' },
            { group: ['**/test/**'], message: 'production code may not import test/.' },
          ],
        },
      ],
    },
  },
  {
    files: ['renderer/src/**/*.ts', 'renderer/src/**/*.tsx'],
    rules: {
      'no-restricted-imports': [
        'error',
        {
          patterns: [
            { group: ['**/cli/**'], message: 'the renderer may not import cli/.' },
            { group: ['**/test/**'], message: 'production code may not import test/.' },
            { group: ['node:*'], message: 'the renderer runs in a browser: no Node APIs.' },
          ],
        },
      ],
    },
  },
  {
    files: ['**/*.js', '**/*.mjs', '**/*.cjs'],
    languageOptions: {
      globals: { process: 'readonly', console: 'readonly', URL: 'readonly', Buffer: 'readonly' },
    },
  },
);
