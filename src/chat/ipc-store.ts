/**
 * The log and the marks for a worker process, through its parent: every call travels over the
 * IPC channel and runs on the parent's one store (one connection pool per instance, however many
 * workers it has: a PostgreSQL server is not handed a pool per worker). A StoreError comes back
 * as a StoreError with the same code, operation and words.
 */
import { StoreError, type LogStore } from '../verbs/ask.js';

type StoreErrorCode = StoreError['code'];
type StoreOp = StoreError['op'];

export const LOG_METHODS = [
  'appendCheck',
  'setThread',
  'setDelivery',
  'get',
  'recent',
  'putMark',
  'getMark',
  'listMarks',
  'countRejected',
  'rejectedCount',
  'getCloses',
  'putCloses',
  'setVariedFrom',
  'setPosted',
  'tombstone',
  'recentOfUser',
  'getDefaults',
  'putDefaults',
  'ping',
] as const;
export type LogMethod = (typeof LOG_METHODS)[number];

export interface StoreCall {
  kind: 'store';
  id: number;
  method: LogMethod;
  args: unknown[];
}

export interface StoreAnswer {
  kind: 'store-answer';
  id: number;
  ok: boolean;
  value?: unknown;
  error?: { code: StoreErrorCode; op: StoreOp; message: string } | { internal: string };
}

/** The worker's side: a LogStore whose calls are answered by the parent. */
export function ipcStore(send: (m: StoreCall) => void, backend: LogStore['backend'], where: string): { store: LogStore; answer(m: StoreAnswer): void; fail(reason: string): void } {
  let next = 1;
  const waiting = new Map<number, { resolve(v: unknown): void; reject(e: Error): void }>();
  const call = (method: LogMethod, args: unknown[]) =>
    new Promise<unknown>((resolve, reject) => {
      const id = next++;
      waiting.set(id, { resolve, reject });
      try {
        send({ kind: 'store', id, method, args });
      } catch (e) {
        waiting.delete(id);
        reject(new StoreError('unavailable', method === 'get' || method === 'recent' || method.startsWith('get') || method.startsWith('list') || method === 'rejectedCount' || method === 'ping' ? 'read' : 'write', `the app's store could not be reached (${(e as Error).message})`));
      }
    });
  const store = { backend, where } as Record<string, unknown>;
  for (const m of LOG_METHODS) store[m] = (...args: unknown[]) => call(m, args);
  return {
    store: store as unknown as LogStore,
    answer(m) {
      const w = waiting.get(m.id);
      if (!w) return;
      waiting.delete(m.id);
      if (m.ok) w.resolve(m.value);
      else if (m.error && 'code' in m.error) w.reject(new StoreError(m.error.code, m.error.op, m.error.message.replace(/^the log could not be (opened|read|written): /, '')));
      else w.reject(new Error(m.error && 'internal' in m.error ? m.error.internal : 'store call failed'));
    },
    fail(reason) {
      for (const [id, w] of waiting) {
        waiting.delete(id);
        w.reject(new StoreError('unavailable', 'write', reason));
      }
    },
  };
}

/** The parent's side: answers one call from a worker on the instance's store. */
export async function serveStoreCall(store: LogStore | null, m: StoreCall): Promise<StoreAnswer> {
  if (!store) {
    return { kind: 'store-answer', id: m.id, ok: false, error: { code: 'unavailable', op: 'read', message: 'the log could not be read: this instance has no log' } };
  }
  if (!(LOG_METHODS as readonly string[]).includes(m.method)) {
    return { kind: 'store-answer', id: m.id, ok: false, error: { internal: `no store method ${String(m.method)}` } };
  }
  try {
    const fn = store[m.method] as (...a: unknown[]) => Promise<unknown>;
    const value = await fn.apply(store, m.args);
    return { kind: 'store-answer', id: m.id, ok: true, value };
  } catch (e) {
    if (e instanceof StoreError) return { kind: 'store-answer', id: m.id, ok: false, error: { code: e.code, op: e.op, message: e.message } };
    return { kind: 'store-answer', id: m.id, ok: false, error: { internal: e instanceof Error ? e.message : String(e) } };
  }
}
