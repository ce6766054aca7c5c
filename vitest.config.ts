import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    globalSetup: ['test/build-server.ts'],
    testTimeout: 30_000,
    hookTimeout: 30_000,
    pool: 'forks',
    // the export memory test forces collections to see what is really retained
    execArgv: ['--expose-gc'],
    reporters: ['default'],
  },
});
