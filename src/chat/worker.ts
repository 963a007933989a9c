/**
 * A worker process of the chat app's pool (see pool.ts): answers jobs one at a time over the IPC
 * channel. Its log is either a SQLite file it opens itself (KOLMO_WORKER_DB; SQLite allows several
 * connections) or the app's own store reached through the IPC channel (KOLMO_WORKER_STORE, the
 * PostgreSQL backend: the worker holds no database connection of its own). It ends when the app
 * goes away (the channel disconnects) or is told to stop.
 */
import '../runtime.js';
import { workerSettings } from '../config.js';
import { openDatabase, type LogStore } from '../verbs/ask.js';
import { ipcStore, type StoreAnswer, type StoreCall } from './ipc-store.js';
import type { Ping } from './pool.js';
import { work, type Job } from './work.js';

const send = process.send?.bind(process);
if (!send) {
  process.stderr.write('kolmo worker: must be started by the app (no IPC channel)\n');
  process.exit(2);
}

const settings = workerSettings();
if (!settings.ok) {
  process.stderr.write(`kolmo worker: ${settings.errors.join(' ')}\n`);
  process.exit(2);
}
const where = settings.log;

let store: LogStore | null = null;
let closeStore: () => void = () => undefined;
let storeNote: string | undefined;
let viaParent: ReturnType<typeof ipcStore> | undefined;
if (where.kind === 'parent') {
  viaParent = ipcStore((m: StoreCall) => send!(m), where.backend, where.where);
  store = viaParent.store;
} else if (where.kind === 'file') {
  const dbPath = where.path;
  try {
    const s = await openDatabase({ backend: 'sqlite', path: dbPath });
    store = s;
    closeStore = () => void s.close();
  } catch (err) {
    storeNote = `the log is unavailable (${err instanceof Error ? err.message : String(err)}); answered without it`;
  }
}

const stop = () => {
  try {
    viaParent?.fail('the app is stopping');
    closeStore();
  } finally {
    process.exit(0);
  }
};
process.on('disconnect', stop);
process.on('SIGTERM', stop);

process.on('message', (m: { id: number; job: Job } | StoreAnswer | Ping) => {
  if ('kind' in m) {
    if (m.kind === 'store-answer') viaParent?.answer(m);
    // the app's health check: answered as soon as this process reads its channel
    else if (m.kind === 'ping') send!({ kind: 'pong', id: m.id } satisfies Ping);
    return;
  }
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

// up: the pool counts this worker as started (until then a silent worker is loading, not stuck)
send({ kind: 'pong', id: 0 } satisfies Ping);
