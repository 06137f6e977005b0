import { defineConfig } from 'vitest/config';
import { TEST_TAGS } from './test/tags.ts';

// `npm run bench:drive`: the time from Start to a finished 0–7 V table on the simulated bench, hands-off
// against the same run driven by keypresses (test/e2e/drive.test.ts; both print an `e2e drive bench:` line).
// A measurement for the reader: nothing asserts on time. Needs Debian's Chromium (/usr/bin/chromium).
export default defineConfig({
  test: {
    tags: TEST_TAGS,
    include: ['test/e2e/drive.test.ts'],
    testNamePattern: 'runs 0–7 V hands-off|driven by keypresses',
    env: { SPANMETER_DRIVE_BENCH: '1', SPANMETER_SIM_PACE: '1' },
    testTimeout: 600_000,
    hookTimeout: 180_000,
    pool: 'forks',
    fileParallelism: false,
  },
});
