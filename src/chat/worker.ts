/**
 * A worker thread of the chat app's pool: opens its own connection to the log (SQLite allows
 * several), then answers jobs one at a time. See pool.ts.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { openStore, type Store } from '../store/store.js';
import { work, type Job } from './work.js';

interface Data {
  dbPath: string | null;
}

const data = workerData as Data;
let store: Store | null = null;
let storeNote: string | undefined;
if (data.dbPath) {
  try {
    store = openStore(data.dbPath);
  } catch (err) {
    storeNote = `the log is unavailable (${err instanceof Error ? err.message : String(err)}); answered without it`;
  }
}

const port = parentPort;
if (port) {
  port.on('message', (m: { id: number; job: Job }) => {
    work(m.job, store).then(
      (result) => {
        if (storeNote && result.reply.kind === 'answer') result.reply.warnings.push(storeNote);
        port.postMessage({ id: m.id, ok: true, result }, result.png ? [result.png.buffer as ArrayBuffer] : []);
      },
      (err: unknown) => {
        port.postMessage({ id: m.id, ok: false, error: err instanceof Error ? err.message : String(err) });
      },
    );
  });
  port.on('close', () => store?.close());
}
