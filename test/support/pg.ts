/** The tests' PostgreSQL: a fresh database per test file or suite on the run's server (see test/setup/postgres.ts). */
import { inject } from 'vitest';
import { createDatabase } from './pg-cluster.js';

/** URL of the run's server (its admin database). */
export function pgServerUrl(): string {
  return inject('pgUrl');
}

/** A new empty database on the run's server; `drop()` removes it (also with connections still open). */
export function freshDatabase(tag: string): Promise<{ url: string; drop: () => Promise<void> }> {
  return createDatabase(pgServerUrl(), tag);
}
