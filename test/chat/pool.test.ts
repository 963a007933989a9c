/**
 * The worker pool with the real worker (the compiled dist/src/chat/worker.js, built by `tsc`
 * before the tests) and with a test worker that hangs or dies on demand. Checks: answers come
 * back whole (the chart bytes start with the PNG signature 89 50 4E 47 0D 0A 1A 0A, PNG
 * specification §5.2), a stuck or dead worker fails only its own job and is replaced, and
 * closing fails what is still waiting.
 */
import { describe, it, expect } from 'vitest';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { EngineError, WorkerPool } from '../../src/chat/pool.js';
import { ROOT } from './harness.js';

const CHECK =
  'check +2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 rate 4.5% yield 1% drift 9% vol 26% horizon 2027-02-15 asof 2027-01-04';
const PNG = [0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a];
const job = (text: string, channel = 'CPOOL00001') => ({ text, channel, user: 'UTRADERAA1', now: new Date().toISOString() });
const realWorker = pathToFileURL(join(ROOT, 'dist', 'src', 'chat', 'worker.js'));
const stuckWorker = pathToFileURL(join(ROOT, 'dist', 'test', 'chat', 'stuck-worker.js'));

async function reason(p: Promise<unknown>): Promise<string> {
  try {
    await p;
    return 'resolved';
  } catch (err) {
    return err instanceof EngineError ? err.reason : `other: ${String(err)}`;
  }
}

describe('worker pool', () => {
  it('answers with the real worker: a check with its PNG chart, help without one', async () => {
    const pool = new WorkerPool({ size: 2, db: null, taskTimeoutMs: 60000, script: realWorker });
    try {
      const [check, help, bad] = await Promise.all([pool.run(job(CHECK)), pool.run(job('help')), pool.run(job('check +2 call'))]);
      expect(check.reply.kind).toBe('answer');
      expect(check.png).toBeDefined();
      expect([...check.png!.subarray(0, 8)]).toEqual(PNG);
      expect(check.reply.kind === 'answer' && check.reply.chart).toBeFalsy(); // the chart input stays in the worker
      expect(help.reply.kind === 'answer' && help.reply.ephemeral).toBe(true);
      expect(help.png).toBeUndefined();
      expect(bad.reply.kind).toBe('rejected');
    } finally {
      await pool.close();
    }
  });

  it('a stuck job fails at its deadline, its worker is replaced, and the next job is answered', async () => {
    const pool = new WorkerPool({ size: 1, db: null, taskTimeoutMs: 1500, script: stuckWorker });
    try {
      expect(await reason(pool.run(job('hang')))).toBe('timeout');
      const next = await pool.run(job('help'));
      expect(next.reply.kind).toBe('answer');
    } finally {
      await pool.close();
    }
  });

  it('a worker that dies fails only its own job; the others are answered', async () => {
    const pool = new WorkerPool({ size: 1, db: null, taskTimeoutMs: 30000, script: stuckWorker });
    try {
      const results = await Promise.all([reason(pool.run(job('help'))), reason(pool.run(job('crash'))), reason(pool.run(job('help')))]);
      expect(results).toEqual(['resolved', 'crashed', 'resolved']);
    } finally {
      await pool.close();
    }
  });

  it('closing fails the jobs still waiting and refuses new ones', async () => {
    const pool = new WorkerPool({ size: 1, db: null, taskTimeoutMs: 30000, script: stuckWorker });
    const running = reason(pool.run(job('hang')));
    const waiting = reason(pool.run(job('help')));
    await new Promise((r) => setTimeout(r, 200));
    await pool.close();
    expect(await waiting).toBe('closed');
    expect(await running).toBe('closed');
    expect(await reason(pool.run(job('help')))).toBe('closed');
  });

  it('health: the real workers answer over their IPC channel', async () => {
    const pool = new WorkerPool({ size: 2, db: null, taskTimeoutMs: 60000, script: realWorker });
    try {
      expect(await pool.started(30000)).toBe(true);
      expect(await pool.ping(5000)).toEqual({ answering: 2, of: 2 });
    } finally {
      await pool.close();
    }
  });

  it('health: a worker that is up but does not answer is counted out and replaced by a fresh one', async () => {
    const events: string[] = [];
    const pool = new WorkerPool({ size: 1, db: null, taskTimeoutMs: 30000, script: stuckWorker, onEvent: (e) => events.push(`${e.event}: ${e.detail}`) });
    try {
      expect(await pool.started(30000)).toBe(true);
      expect(await pool.ping(300)).toEqual({ answering: 0, of: 1 });
      expect(events[0]).toMatch(/^worker-error: a worker did not answer a health check within 300 ms; replacing it$/);
      // the fresh worker takes the next job
      const next = await pool.run(job('help'));
      expect(next.reply.kind).toBe('answer');
      expect(events.some((e) => /^worker-exit: signal SIGKILL$/.test(e))).toBe(true);
    } finally {
      await pool.close();
    }
  });
});
