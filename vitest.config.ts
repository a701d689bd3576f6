import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['tests/**/*.test.ts'],
    testTimeout: 60_000,
    pool: 'forks',
    // One fork runs file after file with its module cache kept: the engine, zod, mathjs and the
    // server load once instead of once per file (import time 128 s → 24 s of a 10-minute suite
    // on two cores). A test that changes a global (code generation, a stubbed global, an
    // environment variable) puts it back in its own afterEach/afterAll.
    isolate: false,
  },
});
