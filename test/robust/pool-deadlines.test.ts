/**
 * The worker pool's two deadlines, with the real pool and the test worker that hangs on demand
 * (test/chat/stuck-worker.ts, compiled): the compute deadline counts from the moment a worker takes
 * a job, not from submission (a job that waited in line still gets its full budget), and a job that
 * cannot get a worker within the wait bound is dropped unstarted as 'overloaded'.
 */
import { describe, it, expect } from 'vitest';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { EngineError, WorkerPool } from '../../src/chat/pool.js';
import { ROOT } from '../chat/harness.js';

const stuckWorker = pathToFileURL(join(ROOT, 'dist', 'test', 'chat', 'stuck-worker.js'));
const job = (text: string) => ({ text, channel: 'CPOOLDEAD1', user: 'UTRADERAA1', now: new Date().toISOString() });

async function reason(p: Promise<unknown>): Promise<string> {
  try {
    await p;
    return 'resolved';
  } catch (err) {
    return err instanceof EngineError ? err.reason : `other: ${String(err)}`;
  }
}

describe('worker pool deadlines', () => {
  it('a job waiting behind a stuck one is dropped as overloaded at the wait bound; the stuck one times out on its own budget', async () => {
    const pool = new WorkerPool({ size: 1, db: null, taskTimeoutMs: 4000, waitTimeoutMs: 800, script: stuckWorker });
    try {
      const stuck = reason(pool.run(job('hang')));
      const waiting = reason(pool.run(job('help')));
      expect(await waiting).toBe('overloaded');
      expect(await stuck).toBe('timeout');
      // the replaced worker answers the next job
      expect(await reason(pool.run(job('help')))).toBe('resolved');
    } finally {
      await pool.close();
    }
  });

  it('the compute budget starts when a worker takes the job, not when it was submitted', async () => {
    // budget 5 s; the second job waits the whole 5 s behind the first (which times out), then
    // must still get its own full budget on the replacement worker (start-up included) and be
    // answered — counted from submission it would have timed out before it started
    const pool = new WorkerPool({ size: 1, db: null, taskTimeoutMs: 5000, waitTimeoutMs: 20000, script: stuckWorker });
    try {
      const first = reason(pool.run(job('hang')));
      const second = reason(pool.run(job('help')));
      expect(await first).toBe('timeout');
      expect(await second).toBe('resolved');
    } finally {
      await pool.close();
    }
  });
});
