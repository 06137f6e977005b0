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
          ],
        },
      ],
      'no-console': 'error',
    },
  },
  {
    files: ['**/*.js', '**/*.mjs', '**/*.cjs'],
    languageOptions: {
      globals: { process: 'readonly', console: 'readonly', URL: 'readonly', Buffer: 'readonly' },
    },
  },
);
