import { defineConfig } from 'vitest/config';
import { fileURLToPath } from 'node:url';

const root = fileURLToPath(new URL('../..', import.meta.url));

// End-to-end run (npm run test:e2e): Chromium through the browser host, one file at a time.
export default defineConfig({
  root,
  test: {
    include: ['test/e2e/**/*.e2e.ts'],
    testTimeout: 600_000,
    hookTimeout: 300_000,
    pool: 'forks',
    fileParallelism: false,
    // Screens update after the core answers; on this slow machine that can take seconds.
    expect: { poll: { timeout: 30_000, interval: 200 } },
  },
});
