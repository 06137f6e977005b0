/**
 * The test tags every vitest configuration of the project defines (vitest 4.1 test tags), so a file run
 * under any of them collects.
 *
 * - `real-time`: a browser test that waits on the real clock, because the fake capture device plays its
 *   recording at real time, or because the test acts while a run is going and so runs the simulated
 *   oscillator at pace 1. They run in the long lane (`npm run test:long`), not in `npm test`.
 */
export const TEST_TAGS = [
  {
    name: 'real-time',
    description:
      'Browser test that waits on the real clock (fake capture device, or pace 1 to act mid-run); runs in npm run test:long',
  },
];
