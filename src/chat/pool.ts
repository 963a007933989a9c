/**
 * Heavy work (the engine and chart rendering) kept off the event loop that acknowledges requests.
 *
 * WorkerPool: a fixed set of worker processes (default: one per core), each running worker.js
 * from the compiled tree, one job at a time, fed from a FIFO queue. A job has two deadlines: its
 * compute budget in time (`taskTimeoutMs`, from the moment a worker takes it; past it the worker is
 * killed and replaced) and a bound on its wait for a worker (`waitTimeoutMs`, from submission; past
 * it the job is dropped from the queue unstarted), so neither a pathological request nor a long
 * line can hold an answer back without end. A worker that dies takes only its own job with it and is replaced, with a
 * growing pause when workers keep dying, so a broken build cannot spin.
 *
 * Why processes and not worker_threads: tearing down a worker thread that has drawn a chart
 * (canvas, a native addon, with fonts registered) ends the whole process with SIGSEGV — seen here
 * on Node 20 with canvas as installed, whether the thread is terminated, exits itself, or the
 * process exits with the thread alive. With threads, replacing a stuck worker or shutting down
 * would crash the app; a child process can be killed safely. Messages use the 'advanced'
 * (structured clone) serialization, so the PNG bytes travel as bytes. The workers get the
 * environment without the workspace secrets, and run at a lower scheduling priority (nice
 * WORKER_NICE) than the app: on a machine with as many busy workers as cores, the app's event loop
 * — acknowledging requests within the platform's 3 seconds — must not wait for CPU behind them.
 *
 * InlineEngine: the same work on the main thread (KOLMO_WORKERS=0), for comparison and small
 * installations.
 */
import { fork, type ChildProcess } from 'node:child_process';
import { setPriority } from 'node:os';
import { fileURLToPath } from 'node:url';
import { SECRET_SETTINGS } from '../config.js';
import type { LogStore } from '../verbs/ask.js';
import { serveStoreCall, type StoreCall } from './ipc-store.js';
import { work, type Job, type WorkResult } from './work.js';

export interface Engine {
  run(job: Job): Promise<WorkResult>;
  close(): Promise<void>;
  readonly size: number;
  /** workers whose process is up (the inline engine: 1) */
  readonly alive: number;
  /**
   * Asks the workers whether they answer, within `timeoutMs`: how many did, of how many there
   * are. A worker busy on a job counts as answering while the job is within its deadline (past
   * it the pool replaces the worker anyway); an idle worker that does not answer is stuck and is
   * replaced by a fresh one.
   */
  ping(timeoutMs: number): Promise<{ answering: number; of: number }>;
  /** Resolves true once every worker is up (loaded and reading its channel), false after `timeoutMs`. */
  started(timeoutMs: number): Promise<boolean>;
}

/** A health question to a worker and its answer, over the IPC channel. */
export interface Ping {
  kind: 'ping' | 'pong';
  id: number;
}

export class EngineError extends Error {
  constructor(
    message: string,
    readonly reason: 'timeout' | 'overloaded' | 'crashed' | 'closed' | 'failed',
  ) {
    super(message);
    this.name = 'EngineError';
  }
}

interface Task {
  id: number;
  job: Job;
  resolve: (r: WorkResult) => void;
  reject: (e: Error) => void;
  timer: NodeJS.Timeout;
  slot?: Slot;
  done: boolean;
}

interface Slot {
  worker: ChildProcess;
  task?: Task;
  ready: boolean;
  /** health questions waiting for this worker's answer */
  pings: Map<number, () => void>;
  /** the worker has said it is up (its first message); until then it is starting, not stuck */
  started: boolean;
}

export interface PoolOptions {
  size: number;
  /**
   * the log the workers use: a SQLite file each opens itself (`file`), or the app's own store,
   * reached over the IPC channel (`parent`: the PostgreSQL backend, so one instance holds one
   * connection pool however many workers it runs), or none
   */
  db: { kind: 'file'; path: string } | { kind: 'parent'; store: LogStore } | null;
  /** compute deadline per job, from the moment a worker takes it */
  taskTimeoutMs: number;
  /** how long a job may wait for a worker (default 5 × taskTimeoutMs) */
  waitTimeoutMs?: number;
  /** the worker script (default: worker.js beside this module) */
  script?: URL;
  /** told about worker deaths and restarts */
  onEvent?: (e: { event: 'worker-exit' | 'worker-error'; detail: string }) => void;
}

/** niceness of the worker processes (0 = the app's own, 19 = the lowest priority) */
export const WORKER_NICE = 10;

export class WorkerPool implements Engine {
  private readonly slots = new Set<Slot>();
  private readonly queue: Task[] = [];
  private nextId = 1;
  private nextPing = 1;
  private readonly startWaiters = new Set<() => void>();
  private closing = false;
  private crashes = 0;
  private readonly script: URL;

  constructor(private readonly opts: PoolOptions) {
    if (!Number.isInteger(opts.size) || opts.size < 1) throw new RangeError('pool size must be a whole number ≥ 1');
    this.script = opts.script ?? new URL('./worker.js', import.meta.url);
    for (let i = 0; i < opts.size; i++) this.spawn();
  }

  get size(): number {
    return this.opts.size;
  }

  get alive(): number {
    let n = 0;
    for (const s of this.slots) if (s.worker.connected && s.ready) n++;
    return n;
  }

  /** jobs waiting for a worker */
  get waiting(): number {
    return this.queue.length;
  }

  run(job: Job): Promise<WorkResult> {
    if (this.closing) return Promise.reject(new EngineError('the engine is shutting down', 'closed'));
    return new Promise<WorkResult>((resolve, reject) => {
      const task: Task = {
        id: this.nextId++,
        job,
        resolve,
        reject,
        done: false,
        timer: setTimeout(() => this.expire(task, 'overloaded'), this.opts.waitTimeoutMs ?? 5 * this.opts.taskTimeoutMs),
      };
      task.timer.unref?.();
      this.queue.push(task);
      this.dispatch();
    });
  }

  private spawn(): void {
    if (this.closing) return;
    const db = this.opts.db;
    const env: NodeJS.ProcessEnv = {
      ...process.env,
      KOLMO_WORKER_DB: db?.kind === 'file' ? db.path : '',
      KOLMO_WORKER_STORE: db?.kind === 'parent' ? `${db.store.backend} ${db.store.where}` : '',
    };
    for (const k of SECRET_SETTINGS) delete env[k]; // secrets are never handed to a worker
    const worker = fork(fileURLToPath(this.script), [], {
      env,
      serialization: 'advanced',
      // the worker's stdout is not the app's log; its stderr (a crash report) is kept
      stdio: ['ignore', 'ignore', 'inherit', 'ipc'],
    });
    try {
      if (worker.pid !== undefined) setPriority(worker.pid, WORKER_NICE);
    } catch {
      /* not permitted here: the workers run at the app's priority */
    }
    const slot: Slot = { worker, ready: true, pings: new Map(), started: false };
    this.slots.add(slot);
    worker.on('message', (m: { id: number; ok: boolean; result?: WorkResult; error?: string } | StoreCall | Ping) => {
      if ('kind' in m && m.kind === 'pong') {
        slot.started = true;
        slot.pings.get(m.id)?.();
        if (m.id === 0) for (const f of this.startWaiters) f();
        return;
      }
      if ('kind' in m && m.kind === 'store') {
        const store = db?.kind === 'parent' ? db.store : null;
        void serveStoreCall(store, m).then((a) => {
          if (worker.connected) worker.send(a, () => undefined);
        });
        return;
      }
      if ('kind' in m) return;
      const task = slot.task;
      if (!task || task.id !== m.id) return;
      slot.task = undefined;
      this.crashes = 0;
      this.finish(task, m.ok && m.result ? { ok: true, value: m.result } : { ok: false, error: new EngineError(m.error ?? 'the worker failed', 'failed') });
      this.dispatch();
    });
    worker.on('error', (err) => {
      this.opts.onEvent?.({ event: 'worker-error', detail: err.message });
    });
    worker.on('exit', (code, signal) => {
      this.slots.delete(slot);
      const task = slot.task;
      slot.task = undefined;
      const how = signal ? `signal ${signal}` : `exit code ${code}`;
      if (task) {
        const error = this.closing
          ? new EngineError('the engine is shutting down', 'closed')
          : new EngineError(`the worker stopped (${how}) while answering`, 'crashed');
        this.finish(task, { ok: false, error });
      }
      if (this.closing) return;
      this.opts.onEvent?.({ event: 'worker-exit', detail: how });
      this.crashes++;
      const pause = Math.min(5000, this.crashes <= 1 ? 0 : 100 * 2 ** Math.min(6, this.crashes - 2));
      const t = setTimeout(() => {
        this.spawn();
        this.dispatch();
      }, pause);
      t.unref?.();
    });
  }

  /** Resolves true once every worker has said it is up, false after `timeoutMs`. */
  async started(timeoutMs: number): Promise<boolean> {
    const all = () => this.slots.size >= this.opts.size && [...this.slots].every((s) => s.started);
    if (all()) return true;
    return new Promise<boolean>((resolve) => {
      const f = () => {
        if (!all()) return;
        clearTimeout(t);
        this.startWaiters.delete(f);
        resolve(true);
      };
      const t = setTimeout(() => {
        this.startWaiters.delete(f);
        resolve(false);
      }, timeoutMs);
      t.unref?.();
      this.startWaiters.add(f);
    });
  }

  async ping(timeoutMs: number): Promise<{ answering: number; of: number }> {
    const slots = [...this.slots].filter((s) => s.ready && s.worker.connected);
    const answers = await Promise.all(slots.map((s) => (s.task ? Promise.resolve(true) : this.pingOne(s, timeoutMs))));
    return { answering: answers.filter(Boolean).length, of: this.opts.size };
  }

  /** One worker's answer to a health question; a worker that does not answer in time is replaced. */
  private pingOne(slot: Slot, timeoutMs: number): Promise<boolean> {
    const id = this.nextPing++;
    return new Promise<boolean>((resolve) => {
      const t = setTimeout(() => {
        slot.pings.delete(id);
        const gone = slot.worker.exitCode !== null || slot.worker.signalCode !== null;
        if (slot.task || !slot.ready || gone) return resolve(!!slot.task && !gone);
        if (!slot.started) return resolve(false); // still loading: not answering yet, not stuck
        // up, idle and silent: stuck (stopped, or its event loop blocked); a fresh worker takes its place
        this.opts.onEvent?.({ event: 'worker-error', detail: `a worker did not answer a health check within ${timeoutMs} ms; replacing it` });
        slot.ready = false;
        slot.worker.kill('SIGKILL');
        resolve(false);
      }, timeoutMs);
      t.unref?.();
      slot.pings.set(id, () => {
        clearTimeout(t);
        slot.pings.delete(id);
        resolve(true);
      });
      // a worker that is gone fails the send; its exit handler replaces it and the timer answers false
      slot.worker.send({ kind: 'ping', id } satisfies Ping, () => undefined);
    });
  }

  private dispatch(): void {
    for (const slot of this.slots) {
      if (this.queue.length === 0) return;
      if (slot.task || !slot.ready) continue;
      const task = this.queue.shift()!;
      slot.task = task;
      task.slot = slot;
      clearTimeout(task.timer);
      task.timer = setTimeout(() => this.expire(task, 'timeout'), this.opts.taskTimeoutMs);
      task.timer.unref?.();
      slot.worker.send({ id: task.id, job: task.job }, (err) => {
        // the worker is gone: its exit handler fails the task and replaces it
        if (err) slot.worker.kill('SIGKILL');
      });
    }
  }

  private expire(task: Task, why: 'timeout' | 'overloaded'): void {
    if (task.done) return;
    const i = this.queue.indexOf(task);
    if (i >= 0) this.queue.splice(i, 1);
    const slot = task.slot;
    const error =
      why === 'timeout'
        ? new EngineError(`no answer within ${Math.round(this.opts.taskTimeoutMs / 1000)} s of computing`, 'timeout')
        : new EngineError(`no worker free within ${Math.round((this.opts.waitTimeoutMs ?? 5 * this.opts.taskTimeoutMs) / 1000)} s`, 'overloaded');
    this.finish(task, { ok: false, error });
    if (slot && slot.task === task) {
      // the worker is stuck on it: replace the worker
      slot.task = undefined;
      slot.ready = false;
      slot.worker.kill('SIGKILL');
    }
  }

  private finish(task: Task, r: { ok: true; value: WorkResult } | { ok: false; error: Error }): void {
    if (task.done) return;
    task.done = true;
    clearTimeout(task.timer);
    if (r.ok) task.resolve(r.value);
    else task.reject(r.error);
  }

  async close(): Promise<void> {
    this.closing = true;
    for (const t of this.queue.splice(0)) this.finish(t, { ok: false, error: new EngineError('the engine is shutting down', 'closed') });
    await Promise.all(
      [...this.slots].map(
        (s) =>
          new Promise<void>((resolve) => {
            if (s.worker.exitCode !== null || s.worker.signalCode !== null) return resolve();
            const t = setTimeout(() => s.worker.kill('SIGKILL'), 2000);
            s.worker.once('exit', () => {
              clearTimeout(t);
              resolve();
            });
            s.worker.kill('SIGTERM');
          }),
      ),
    );
    this.slots.clear();
  }
}

/** The same work on the calling thread. */
export class InlineEngine implements Engine {
  readonly size = 0;
  readonly alive = 1;
  /** the calling thread answers whenever it runs this */
  async ping(): Promise<{ answering: number; of: number }> {
    return { answering: 1, of: 1 };
  }
  async started(): Promise<boolean> {
    return true;
  }
  constructor(private readonly store: LogStore | null) {}
  async run(job: Job): Promise<WorkResult> {
    return work(job, this.store);
  }
  async close(): Promise<void> {}
}
