/**
 * What happens to a request once a listener has acknowledged it:
 *   1. the inbox (inbox.ts) records it under its delivery key — a key seen before is a re-sent
 *      delivery, acknowledged but not answered again (`admit`);
 *   2. the asker's rate limit (ratelimit.ts) and the bound on requests in line (queue.ts) may turn
 *      it away, with a polite ephemeral notice (`submit`);
 *   3. per channel in arrival order, shared files are read, the engine and the chart run in a
 *      worker process (pool.ts) within the compute budget, then the reply is delivered
 *      (deliver.ts) (`answer`);
 *   4. the inbox marks it finished.
 * While the app stops, requests still in line are handed back: they stay in a persistent inbox
 * and the next start answers them (`resumePending`).
 *
 * One log line per request: channel, user, verb, duration, outcome; the request text only at
 * debug level.
 */
import type { ChatSettings } from '../config.js';
import type { Log } from '../log.js';
import { verbOfText } from '../verbs/ask.js';
import { plainNotice } from './blocks.js';
import { buttonsFor } from './actions/buttons.js';
import { privateLog } from './interactive.js';
import { deliver, tellAsker, type DeliverDeps, type Origin, type Outcome } from './deliver.js';
import { downloadFile, type FileRef } from './files.js';
import type { Inbox, InboxEntry } from './inbox.js';
import { EngineError, type Engine } from './pool.js';
import type { ChannelQueue } from './queue.js';
import type { UserRateLimit } from './ratelimit.js';
import { responder } from './response-url.js';
import type { WorkspaceConfig } from './platform.js';

/** The verb a request text starts with, for the log line (the engine decides what it means). */
export const verbOf = verbOfText;

export interface IntakeDeps {
  config: WorkspaceConfig;
  settings: ChatSettings;
  log: Log;
  inbox: Inbox;
  engine: Engine;
  queue: ChannelQueue;
  limiter: UserRateLimit;
  delivery: DeliverDeps;
  /** an error's text, scrubbed of secrets */
  errText: (err: unknown) => string;
}

/** One acknowledged request. */
export interface Incoming {
  origin: Origin;
  text: string;
  /** performance.now() when it arrived */
  t0: number;
  /** its delivery key in the inbox */
  key: string;
  /** ISO time it arrived: the request's "today" */
  now: string;
  /** left by the previous run and taken up again */
  resumed?: boolean;
  /** files shared with it (a `history` mention) */
  fileRefs?: FileRef[];
  /** a button's variation (or an edit) of this check of the same log */
  variedFrom?: number;
  /** a line before the answer: what the button or the form did, and the request typed out */
  preface?: string;
}

export interface RetryInfo {
  retryNum?: number;
  retryReason?: string;
}

export class Intake {
  readonly counts = { accepted: 0, duplicate: 0, rateLimited: 0, busy: 0, handedBack: 0, resumed: 0 };
  private stopping = false;

  constructor(private readonly d: IntakeDeps) {}

  /** No new work from now on: what is still in line is handed back. */
  stop(): void {
    this.stopping = true;
  }

  /** Records a delivery in the inbox; false when it is a re-sent one (already answered or in line). */
  admit(e: Omit<InboxEntry, 'attempts'>, retry: RetryInfo): boolean {
    let fresh: boolean;
    try {
      fresh = this.d.inbox.accept(e);
    } catch (err) {
      // an inbox that cannot be written must not cost the answer
      this.d.log.warn({ err: this.d.errText(err) }, 'the inbox could not record a request');
      fresh = true;
    }
    if (fresh) this.counts.accepted++;
    else {
      this.counts.duplicate++;
      this.d.log.info(
        { channel: e.channel, user: e.user, source: e.source, outcome: 'duplicate', retryNum: retry.retryNum, retryReason: retry.retryReason },
        'request',
      );
    }
    return fresh;
  }

  /** Puts an admitted request in its channel's line, unless the asker's rate limit or the bound on the line turns it away. */
  submit(req: Incoming): void {
    const { d } = this;
    const r: Incoming = { ...req, text: req.text.trim() === '' ? 'help' : req.text };
    const { origin, text, t0, key } = r;
    const line = this.lineOf(r);
    d.log.debug({ ...line, text }, 'request text');
    if (!r.resumed) {
      const rate = d.limiter.take(origin.user);
      if (!rate.ok) {
        this.counts.rateLimited++;
        d.inbox.finish(key);
        d.log.info({ ...line, verb: verbOf(text), outcome: 'rate-limited', notified: rate.notify, ms: Math.round(performance.now() - t0) }, 'request');
        if (rate.notify) {
          void tellAsker(d.delivery, origin, [
            plainNotice(
              `You are sending Kolmo requests faster than it answers one person (${d.settings.userRate.burst} at once, ${d.settings.userRate.perMinute} a minute); ` +
                `this one and any more in the next few seconds were not answered. Try again in ${rate.retryInSeconds} s.`,
            ),
          ]).catch(() => false);
        }
        return;
      }
    }
    const accepted = d.queue.offer(origin.channel, () => this.answer(r));
    if (!accepted) {
      this.counts.busy++;
      d.inbox.finish(key);
      d.log.info({ ...line, verb: verbOf(text), outcome: 'busy', ms: Math.round(performance.now() - t0) }, 'request');
      void tellAsker(d.delivery, origin, [
        plainNotice(`Kolmo is busy (${d.queue.size} requests in line); nothing was posted. Try again in a minute.`),
      ]).catch(() => false);
    }
  }

  /** Requests a previous process acknowledged but did not answer: resumed, or (too old) the asker is told. */
  resumePending(): void {
    const { d } = this;
    try {
      const { resume, expired } = d.inbox.takePending();
      for (const e of expired) {
        const origin: Origin = { source: e.source, channel: e.channel, user: e.user, ...(e.threadTs ? { threadTs: e.threadTs } : {}) };
        d.inbox.finish(e.key);
        d.log.info({ channel: e.channel, user: e.user, source: e.source, outcome: 'expired', attempts: e.attempts }, 'request');
        void tellAsker(d.delivery, origin, [
          plainNotice(
            `Kolmo was restarted while your request from ${e.now.slice(0, 16).replace('T', ' ')} UTC was in line and could not answer it${e.attempts > 2 ? ' (it stopped twice while working on it)' : ''}; nothing was posted. Ask again if you still need it.`,
          ),
        ]).catch(() => false);
      }
      for (const e of resume) {
        this.counts.resumed++;
        const respond = responder(e.responseUrl);
        // a request written to the app in the person's messages with it: answered there, in their private log
        const dm = /^D/.test(e.channel);
        const origin: Origin = {
          source: e.source,
          channel: e.channel,
          user: e.user,
          ...(dm ? { log: privateLog(e.user), flat: true } : {}),
          ...(e.threadTs ? { threadTs: e.threadTs } : {}),
          ...(respond ? { respond } : {}),
        };
        this.submit({ origin, text: e.text, t0: performance.now(), key: e.key, now: e.now, resumed: true });
      }
      if (resume.length + expired.length > 0) d.log.info({ resumed: resume.length, expired: expired.length }, 'picked up requests left by the previous run');
    } catch (err) {
      d.log.warn({ err: d.errText(err) }, 'the inbox could not be read; unanswered requests of the previous run are not resumed');
    }
  }

  private lineOf(r: Incoming) {
    return { channel: r.origin.channel, user: r.origin.user, source: r.origin.source, ...(r.resumed ? { resumed: true } : {}) };
  }

  /** The request's turn in its channel's line: files, engine, delivery, and the log line. */
  private async answer(r: Incoming): Promise<void> {
    const { d } = this;
    const { origin, text, t0, key } = r;
    const line = this.lineOf(r);
    if (this.stopping) {
      const outcome = await this.handBack(origin, key);
      d.log.info({ ...line, verb: verbOf(text), outcome, ms: Math.round(performance.now() - t0) }, 'request');
      return;
    }
    let outcome: Outcome | 'error' | 'handed-back' | 'dropped' = 'error';
    let verb = verbOf(text);
    let computeMs: number | undefined;
    let logNumber: number | undefined;
    let failures = 0;
    try {
      const files = await this.readFiles(r);
      if (files === null) return;
      const result = await d.engine.run({
        text,
        channel: origin.log ?? origin.channel,
        user: origin.user,
        now: r.now,
        budget: d.settings.computeBudget,
        defaults: true,
        ...(r.variedFrom !== undefined ? { variedFrom: r.variedFrom } : {}),
        ...(r.preface ? { preface: r.preface } : {}),
        ...(r.resumed ? { resumed: r.resumed } : {}),
        ...(files ? { files } : {}),
      });
      computeMs = Math.round(result.ms);
      if (result.reply.kind === 'answer') {
        verb = result.reply.verb;
        logNumber = result.reply.logNumber;
      }
      const dl = await deliver(d.delivery, origin, result.reply, { png: result.png, note: result.chartNote }, { buttons: (a) => buttonsFor(a, origin) });
      outcome = dl.outcome;
      failures = dl.failures.length;
      d.inbox.finish(key);
    } catch (err) {
      if (this.stopping && err instanceof EngineError && err.reason === 'closed') {
        outcome = await this.handBack(origin, key);
      } else {
        const why =
          err instanceof EngineError && err.reason === 'timeout'
            ? `Kolmo stopped working on this request: it needed more than the ${d.config.taskTimeoutSeconds} s of computing one request may use. Nothing was posted. Try fewer legs or comparison parts.`
            : err instanceof EngineError && err.reason === 'overloaded'
              ? 'Kolmo is too busy to answer this request in time; nothing was posted. Try again in a minute.'
              : 'Kolmo hit an internal problem with this request; nothing was posted. Try again.';
        d.log.error({ ...line, err: d.errText(err) }, 'request failed');
        await tellAsker(d.delivery, origin, [plainNotice(why)]).catch(() => false);
        d.inbox.finish(key);
      }
    }
    d.log.info({ ...line, verb, outcome, ms: Math.round(performance.now() - t0), computeMs, logNumber, failures }, 'request');
  }

  /**
   * Files shared with a `history` mention, downloaded in the channel's turn: undefined when there
   * are none, null when they could not be read (the asker has been told and the request is finished).
   */
  private async readFiles(r: Incoming): Promise<{ name: string; base64: string }[] | undefined | null> {
    const { d } = this;
    const refs = r.fileRefs ?? [];
    if (refs.length === 0) return undefined;
    try {
      return await Promise.all(refs.map((f) => downloadFile(f, d.config.botToken, d.config.apiUrl)));
    } catch (err) {
      const why = d.errText(err);
      d.log.info({ ...this.lineOf(r), verb: verbOf(r.text), outcome: 'file-unreadable', ms: Math.round(performance.now() - r.t0) }, 'request');
      await tellAsker(d.delivery, r.origin, [plainNotice(`Kolmo could not read the file shared with this request: ${why}. Nothing was posted.`)]).catch(() => false);
      d.inbox.finish(r.key);
      return null;
    }
  }

  /**
   * Left for the next start: the request stays open in a persistent inbox. Without one the asker
   * is told now (nothing would ever answer it otherwise).
   */
  private async handBack(origin: Origin, key: string): Promise<'handed-back' | 'dropped'> {
    this.counts.handedBack++;
    if (this.d.inbox.persistent) return 'handed-back';
    await tellAsker(this.d.delivery, origin, [plainNotice('Kolmo is restarting and could not answer this request; nothing was posted. Ask again in a minute.')]).catch(() => false);
    this.d.inbox.finish(key);
    return 'dropped';
  }
}
