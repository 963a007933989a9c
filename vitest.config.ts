import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    exclude: ['test/bench/**', 'node_modules/**', 'dist/**'],
    testTimeout: 60_000,
    hookTimeout: 60_000,
    pool: 'forks',
    // a throwaway PostgreSQL cluster for the tests of the PostgreSQL backend (or KOLMO_TEST_DATABASE_URL)
    globalSetup: ['test/setup/postgres.ts'],
  },
});
