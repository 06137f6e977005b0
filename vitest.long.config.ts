import { defineConfig } from 'vitest/config';
import { TEST_TAGS } from './test/tags.ts';

// The long reliability lane (`npm run test:long`): soak, kill tests, heavy fuzzing and hour-long files.
// Run by `.ci/run` after `npm test`; no assertion here depends on how fast the machine is.
export default defineConfig({
  test: {
    tags: TEST_TAGS,
    include: ['test/long/**/*.test.ts'],
    testTimeout: 3_600_000,
    hookTimeout: 600_000,
    pool: 'forks',
    fileParallelism: false,
  },
});
