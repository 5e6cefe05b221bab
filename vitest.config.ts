import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['tests/**/*.test.ts'],
    testTimeout: 60_000,
    hookTimeout: 120_000,
    // Browser tests start their own server and chromium; keep two files at a time on a 2-core machine.
    maxWorkers: 2,
  },
});
