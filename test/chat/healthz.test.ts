/**
 * /healthz asks the workers over their IPC channel instead of looking at whether their processes
 * are up: a worker that stops answering (here: stopped with SIGSTOP, its process still there)
 * makes the instance not ready; the pool replaces it, and the instance is ready again once the
 * fresh worker answers — and answers requests. The real app (`node dist/src/main.js`, HTTP mode,
 * one worker, the SQLite log) against the loopback fake Web API.
 *
 * Outside references: the readiness-probe convention (common practice): 200 when ready, 503 when
 * not; SIGSTOP stops a process until SIGCONT or SIGKILL (POSIX signal(7)).
 */
import { describe, expect, it } from 'vitest';
import { execFileSync } from 'node:child_process';
import { httpEnv, slashBody } from './harness.js';
import { appsFixture } from '../robust/fixture.js';
import { signedPost, until } from '../robust/harness.js';

const WAIT = 60_000;
const fx = appsFixture('kolmo-healthz');

/** The pids of a process's children (its workers). */
const childrenOf = (pid: number): number[] =>
  execFileSync('ps', ['-o', 'pid=', '--ppid', String(pid)], { encoding: 'utf8' })
    .split('\n')
    .map((s) => Number(s.trim()))
    .filter((n) => n > 0);

describe('/healthz asks the workers', () => {
  it('a worker that stops answering makes the instance not ready; a fresh worker makes it ready again', { timeout: 120_000 }, async () => {
    const app = await fx.start(fx.freshDir(), httpEnv(fx.fake.apiUrl, { KOLMO_WORKERS: '1' }));
    const health = async () => {
      const r = await fetch(`http://127.0.0.1:${app.port}/healthz`);
      return { status: r.status, body: (await r.json()) as Record<string, unknown> };
    };
    expect(await health()).toEqual({ status: 200, body: expect.objectContaining({ ready: true, workers: 'ok', answering: '1/1' }) });
    const [worker] = childrenOf(app.child.pid!);
    expect(worker).toBeGreaterThan(0);
    process.kill(worker, 'SIGSTOP');
    try {
      // its process is up, but it does not answer
      const down = await health();
      expect(down).toEqual({ status: 503, body: expect.objectContaining({ ready: false, workers: 'down', answering: '0/1' }) });
      // the pool replaced it: ready again once the fresh worker answers
      let back = await health();
      for (let k = 0; k < 240 && back.status !== 200; k++) {
        await new Promise((r) => setTimeout(r, 250));
        back = await health();
      }
      expect(back).toEqual({ status: 200, body: expect.objectContaining({ ready: true, workers: 'ok', answering: '1/1' }) });
      expect(childrenOf(app.child.pid!)).not.toContain(worker);
      expect(app.lines.some((l) => l.msg === 'worker-error' && /did not answer a health check/.test(String(l.detail)))).toBe(true);
    } finally {
      try {
        process.kill(worker, 'SIGKILL');
      } catch {
        /* already replaced and gone */
      }
    }
    // and the instance answers requests again
    const body = slashBody({ text: 'help', channel: 'C0HEALTHZ1', responseUrl: fx.fake.responseUrl('hz1') });
    expect((await signedPost(app.port, body, 'application/x-www-form-urlencoded')).status).toBe(200);
    await until(() => fx.fake.okCallsOf('response').some((c) => c.body.response_id === 'hz1'), WAIT, 'the answer after the recovery');
  });
});
