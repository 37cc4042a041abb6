import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    testTimeout: 60_000,
    hookTimeout: 60_000,
    // DuckDB files and watched folders are real; keep two workers on a 2-core machine
    maxWorkers: 2,
  },
});
