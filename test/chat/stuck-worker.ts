/**
 * A pool worker for tests of the pool's failure handling: the text `hang` is never answered,
 * `crash` ends the process; anything else is answered by the real work (src/chat/work.ts). It says
 * it is up, like the real worker, but never answers the pool's health questions.
 */
import { work, type Job } from '../../src/chat/work.js';

process.on('disconnect', () => process.exit(0));
process.on('message', (m: { id: number; job: Job } | { kind: string }) => {
  // up, but never answers the pool's health questions (a worker that has stopped answering)
  if ('kind' in m) return;
  if (m.job.text === 'hang') return;
  if (m.job.text === 'crash') process.exit(3);
  work(m.job, null).then(
    (result) => process.send!({ id: m.id, ok: true, result }),
    (err: unknown) => process.send!({ id: m.id, ok: false, error: String(err) }),
  );
});
process.send!({ kind: 'pong', id: 0 });
