/** Shared set-up for the service tests: a real SQLite log in a temporary folder and a way to ask. */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { ask as askSeam, type AskContext } from '../../src/verbs/ask.js';
import type { Answer, Rejection, Reply } from '../../src/reply.js';
import { openDatabase, type AsyncStore, type DatabaseOptions } from '../../src/store/store.js';

export interface Desk {
  dir: string;
  path: string;
  store: AsyncStore;
  /** another connection to the same file (read-only, size-capped…) */
  open(opts?: DatabaseOptions): Promise<AsyncStore>;
  close(): Promise<void>;
}

export async function desk(): Promise<Desk> {
  const dir = mkdtempSync(join(tmpdir(), 'kolmo-service-test-'));
  const path = join(dir, 'log.db');
  const opened: AsyncStore[] = [];
  const open = async (opts?: DatabaseOptions) => {
    const s = await openDatabase({ backend: 'sqlite', path }, opts);
    opened.push(s);
    return s;
  };
  const store = await open();
  return {
    dir,
    path,
    store,
    open,
    async close() {
      for (const s of opened) await s.close();
      rmSync(dir, { recursive: true, force: true });
    },
  };
}

export const T0 = new Date('2027-01-04T14:00:00Z');

export function at(hoursAfterT0: number): Date {
  return new Date(T0.getTime() + hoursAfterT0 * 3_600_000);
}

/** Asks the seam with the desk's log (the SQLite file). */
export function ask(store: AsyncStore | null, text: string, ctx: Partial<AskContext> = {}): Promise<Reply> {
  return askSeam(text, { channel: 'C0DESKA', user: 'U0ALICE', now: T0, store, ...ctx });
}

export function answered(r: Reply): Answer {
  if (r.kind !== 'answer') throw new Error(`expected an answer, got a rejection:\n${(r as Rejection).message}`);
  return r;
}

export function rejected(r: Reply): Rejection {
  if (r.kind !== 'rejected') throw new Error(`expected a rejection, got an answer:\n${r.text}`);
  return r;
}

/** The figures of a check's JSON that depend only on the request's meaning (not on its wording or notes). */
export function figures(json: Record<string, unknown>) {
  const { legs, position, outcome, outcomeMarket, marketVol, market, view, asof, horizon } = json as Record<string, unknown>;
  return { legs, position, outcome, outcomeMarket, marketVol, market, view, asof, horizon };
}

/** Every number in a value (deep), for the no-NaN/Infinity check. */
export function numbersIn(v: unknown, out: number[] = []): number[] {
  if (typeof v === 'number') out.push(v);
  else if (Array.isArray(v)) for (const x of v) numbersIn(x, out);
  else if (v && typeof v === 'object') for (const x of Object.values(v)) numbersIn(x, out);
  return out;
}

export const SPREAD =
  '+2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 rate 4.5% drift 9% asof 2027-01-04';
