import { defineConfig } from 'vitest/config';
import { TEST_TAGS } from './test/tags.ts';

export default defineConfig({
  test: {
    tags: TEST_TAGS,
    include: ['test/**/*.test.ts'],
    testTimeout: 60_000,
    hookTimeout: 120_000,
    pool: 'forks',
  },
});
