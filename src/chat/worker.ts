/**
 * A worker process of the chat app's pool (see pool.ts): opens its own connection to the log
 * (SQLite allows several), then answers jobs one at a time over the IPC channel. It ends when
 * the app goes away (the channel disconnects) or is told to stop.
 */
import { openStore, type Store } from '../verbs/ask.js';
import { work, type Job } from './work.js';

let store: Store | null = null;
let storeNote: string | undefined;
const dbPath = process.env.KOLMO_WORKER_DB;
if (dbPath) {
  try {
    store = openStore(dbPath);
  } catch (err) {
    storeNote = `the log is unavailable (${err instanceof Error ? err.message : String(err)}); answered without it`;
  }
}

const send = process.send?.bind(process);
if (!send) {
  process.stderr.write('kolmo worker: must be started by the app (no IPC channel)\n');
  process.exit(2);
}

const stop = () => {
  try {
    store?.close();
  } finally {
    process.exit(0);
  }
};
process.on('disconnect', stop);
process.on('SIGTERM', stop);

process.on('message', (m: { id: number; job: Job }) => {
  work(m.job, store).then(
    (result) => {
      if (storeNote && result.reply.kind === 'answer') result.reply.warnings.push(storeNote);
      send!({ id: m.id, ok: true, result });
    },
    (err: unknown) => {
      send!({ id: m.id, ok: false, error: err instanceof Error ? err.message : String(err) });
    },
  );
});
