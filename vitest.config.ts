import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    testTimeout: 60_000,
    hookTimeout: 60_000,
    // DuckDB files and watched folders are real; keep two workers on a 2-core machine
    maxWorkers: 2,
    // the read commands remember parsed configs in the user's cache folder (src/config/configMemo.ts):
    // the suite's CLI runs get their own, so they never write to the user's
    env: { XDG_CACHE_HOME: mkdtempSync(path.join(tmpdir(), 'riskfold-test-cache-')) },
  },
});
