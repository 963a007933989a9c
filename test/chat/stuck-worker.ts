/**
 * A pool worker for tests of the pool's failure handling: the text `hang` is never answered,
 * `crash` ends the process; anything else is answered by the real work (src/chat/work.ts).
 */
import { work, type Job } from '../../src/chat/work.js';

process.on('disconnect', () => process.exit(0));
process.on('message', (m: { id: number; job: Job }) => {
  if (m.job.text === 'hang') return;
  if (m.job.text === 'crash') process.exit(3);
  work(m.job, null).then(
    (result) => process.send!({ id: m.id, ok: true, result }),
    (err: unknown) => process.send!({ id: m.id, ok: false, error: String(err) }),
  );
});
