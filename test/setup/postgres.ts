/**
 * vitest globalSetup: a PostgreSQL server for the tests of the PostgreSQL backend. Uses the one
 * KOLMO_TEST_DATABASE_URL names (the tests create and drop their own databases on it, so its user
 * needs CREATEDB), else starts a throwaway cluster (test/support/pg-cluster.ts) and stops it when
 * the run ends. Tests read the URL with `inject('pgUrl')` (test/support/pg.ts).
 */
import type { TestProject } from 'vitest/node';
import { startCluster } from '../support/pg-cluster.js';

declare module 'vitest' {
  export interface ProvidedContext {
    /** URL of a PostgreSQL database whose user may create databases */
    pgUrl: string;
  }
}

export default async function setup(project: TestProject): Promise<() => Promise<void>> {
  const given = process.env.KOLMO_TEST_DATABASE_URL?.trim();
  if (given) {
    project.provide('pgUrl', given);
    return async () => undefined;
  }
  const cluster = await startCluster();
  project.provide('pgUrl', cluster.url);
  return () => cluster.stop();
}
