// @ts-check
import js from '@eslint/js';
import tseslint from 'typescript-eslint';

/**
 * dsp/'s folders, lowest first. Each may import only the folders before it (docs/architecture.md, "Layers").
 */
const DSP_LAYERS = [
  'math',
  'format',
  'converter',
  'pitch',
  'io',
  'model',
  'advice',
  'calibration',
  'recording',
  'sim',
  'drive',
];

/** What no dsp/ module may import: platform APIs and the layers above dsp/. */
const DSP_PURITY = [
  { group: ['node:*', 'fs', 'path', 'os', 'child_process'], message: 'dsp/ must not use Node APIs.' },
  { group: ['electron', 'electron/*'], message: 'dsp/ must not use Electron.' },
  { group: ['react', 'react-dom', 'react/*', 'react-dom/*'], message: 'dsp/ must not use React.' },
  {
    group: ['**/renderer/**', '**/main/**', '**/cli/**', '**/test/**', '**/tools/**'],
    message: 'dsp/ is the bottom layer: it may not import renderer/, main/, cli/, test/ or tools/.',
  },
];

export default tseslint.config(
  { ignores: ['node_modules/', 'build/', 'dist/', 'out/', 'test-artifacts/', 'coverage/'] },
  js.configs.recommended,
  ...tseslint.configs.recommended,
  {
    rules: {
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_' }],
    },
  },
  // dsp/ stays pure (no platform APIs, so it runs in a worker, in Node and in tests alike), and its folders
  // form layers: a folder may import only the folders before it in DSP_LAYERS, and only through their
  // index.ts (the folder's public surface). Lower layers never reach up, so there are no cycles between folders.
  ...DSP_LAYERS.map((layer, i) => ({
    files: [`dsp/${layer}/**/*.ts`],
    rules: {
      'no-restricted-imports': [
        'error',
        {
          patterns: [
            ...DSP_PURITY,
            ...(i + 1 < DSP_LAYERS.length
              ? [
                  {
                    group: DSP_LAYERS.slice(i + 1).flatMap((up) => [`../${up}`, `../${up}/*`]),
                    message: `dsp/${layer}/ sits below ${DSP_LAYERS.slice(i + 1).join(', ')} (DSP_LAYERS in eslint.config.js): it may not import them.`,
                  },
                ]
              : []),
            {
              group: ['../*/*', '!../*/index.ts'],
              message: "import another dsp/ folder through its index.ts, the folder's public surface.",
            },
          ],
        },
      ],
      'no-console': 'error',
    },
  })),
  {
    // Nothing stray at the top of dsp/: every module belongs to a folder.
    files: ['dsp/*.ts'],
    rules: {
      'no-restricted-syntax': [
        'error',
        { selector: 'Program', message: 'dsp/ modules live in a folder (DSP_LAYERS).' },
      ],
    },
  },
  {
    // main/ and cli/ may use dsp/ but not the page; the page may use dsp/ and main/'s contract, not cli/.
    files: ['main/**/*.ts', 'cli/**/*.ts'],
    rules: {
      'no-restricted-imports': [
        'error',
        {
          patterns: [
            { group: ['**/renderer/**'], message: 'main/ and cli/ may not import the renderer.' },
            { group: ['**/tools/**'], message: 'development tools (tools/) are not part of what ships.' },
            { group: ['**/test/**'], message: 'production code may not import test/.' },
            {
              group: ['**/dsp/*/*', '!**/dsp/*/index.ts'],
              message: "use a dsp/ folder through its index.ts, the folder's public surface.",
            },
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
            {
              group: ['**/dsp/*/*', '!**/dsp/*/index.ts'],
              message: "use a dsp/ folder through its index.ts, the folder's public surface.",
            },
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
