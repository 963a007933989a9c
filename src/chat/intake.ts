/**
 * The request intake: what happens to a `/kolmo` command or an @-mention between the platform and
 * the reply, on one instance or several sharing one store.
 *
 *   1. before Bolt acknowledges it (`recordFirst` wraps the app's processEvent), the request is
 *      recorded in the store's request queue under its delivery key, after the asker's rate
 *      bucket (shared by all instances) and the bound on the line; a key seen before is a re-sent
 *      delivery, acknowledged but not answered again, whichever instance got it first;
 *   2. the listener acknowledges it and calls `after`, which wakes the dispatcher (or turns the
 *      request away politely, or answers it from memory when the store could not record it);
 *   3. the dispatcher of any instance claims it (`handle`): files shared with a `history` mention,
 *      the engine in a worker, the delivery (each posted part recorded, so a take-over posts only
 *      the rest), then the request is marked done;
 *   4. one log line per request: channel, user, verb, duration, outcome.
 * Interactive requests take the same path: direct messages are read off the delivery like
 * mentions; a button's variation, a form submission, post to a channel and a re-run from my desk
 * come through `submit`, awaited by their listener before it acknowledges, and carry how they are
 * answered (their `interaction`: private log, flat messages, notices, the check varied, preface).
 * Without a store (the SQLite file cannot be opened) or when it fails mid-run, requests are
 * answered from memory (queue.ts, ratelimit.ts, an in-memory inbox) and flagged "Not logged".
 */
import type { Log } from '../log.js';
import { readsFiles, verbOfText, StoreError, type Admission, type AsyncStore, type ClaimedRequest, type Interaction, type Progress, type QueuedRequest, type RateDecision } from '../verbs/ask.js';
import type { ChatSettings } from '../config.js';
import { plainNotice } from './blocks.js';
import { buttonsFor } from './actions/buttons.js';
import { privateLog } from './listeners/shared.js';
import { deliver, tellAsker, type DeliverDeps, type Origin, type Outcome } from './deliver.js';
import type { Claim, Dispatcher } from './dispatch.js';
import { downloadFile, fileRefsOf } from './files.js';
import { MAX_ATTEMPTS, MemoryInbox, RESUME_WINDOW_MS } from './inbox.js';
import { commandKey, COMMAND } from './listeners/commands.js';
import { eventKey, stripMention } from './listeners/events.js';
import type { Metrics } from './metrics.js';
import type { BoltApp, WorkspaceConfig } from './platform.js';
import { EngineError, type Engine } from './pool.js';
import { ChannelQueue } from './queue.js';
import { USER_RATE_DEFAULTS, UserRateLimit } from './ratelimit.js';
import { responder } from './response-url.js';

/** The verb a request text starts with, for the log line (the engine decides what it means). */
export const verbOf = verbOfText;

/** A request from the interactive listeners (buttons, the check form, my desk, post to a channel). */
export interface Incoming {
  /** where and how it is answered (a response URL, not a function, so any instance can answer it) */
  origin: Omit<Origin, 'respond'>;
  /** a slash command's response URL (the empty `/kolmo` whose form could not open) */
  responseUrl?: string;
  text: string;
  /** performance.now() when it arrived */
  t0: number;
  /** its delivery key */
  key: string;
  /** ISO time it arrived: the request's "today" */
  now: string;
  /** files shared with it (a `history` mention) */
  fileRefs?: { name: string; url: string; size?: number }[];
  /** a button's variation (or an edit) of this check of the same log */
  variedFrom?: number;
  /** a line before the answer: what the button or the form did, and the request typed out */
  preface?: string;
}

export interface RetryInfo {
  retryNum?: number;
  retryReason?: string;
}

export interface IntakeDeps {
  config: WorkspaceConfig;
  settings: ChatSettings;
  log: Log;
  /** the instance's store (counted in the metrics), or null: answered from memory */
  store: AsyncStore | null;
  engine: Engine;
  deps: DeliverDeps;
  metrics: Metrics;
  botUserId: string | undefined;
  errText: (err: unknown) => string;
}

export type Intake = ReturnType<typeof createIntake>;

export function createIntake(d: IntakeDeps) {
  const { config, settings, log, engine, deps, metrics, botUserId, errText } = d;
  const counted = d.store;
  let dispatcher: Dispatcher | null = null;
  const local = new ChannelQueue(config.queueLimit);
  const localInbox = new MemoryInbox();
  const limiter = new UserRateLimit({ ...USER_RATE_DEFAULTS, ...settings.userRate });
  let stopping = false;
  const counts = { accepted: 0, duplicate: 0, rateLimited: 0, busy: 0, handedBack: 0, resumed: 0, local: 0 };
  const line = (r: Pick<QueuedRequest, 'channel' | 'user' | 'source' | 'interaction'>, extra: Record<string, unknown> = {}) => ({
    channel: r.channel,
    user: r.user,
    source: r.interaction?.source ?? r.source,
    ...extra,
  });
  const originOf = (r: QueuedRequest): Origin => {
    const respond = responder(r.responseUrl);
    const i = r.interaction;
    if (i) {
      // an interactive request: answered exactly as its listener said, whichever instance claims it
      return {
        source: i.source,
        channel: r.channel,
        user: r.user,
        ...(i.log ? { log: i.log } : {}),
        ...(i.flat ? { flat: true } : {}),
        ...(i.tellIn ? { tellIn: i.tellIn } : {}),
        ...(r.threadTs ? { threadTs: r.threadTs } : {}),
        ...(respond ? { respond } : {}),
      };
    }
    // a request written to the app in the person's messages with it: answered there, in their private log
    const dm = /^D/.test(r.channel);
    return {
      source: r.source,
      channel: r.channel,
      user: r.user,
      ...(dm ? { log: privateLog(r.user), flat: true } : {}),
      ...(r.threadTs ? { threadTs: r.threadTs } : {}),
      ...(respond ? { respond } : {}),
    };
  };

  /** The engine, then the delivery; the outcome for the log line and the metrics. */
  const answer = async (
    r: QueuedRequest,
    resumed: boolean,
    resume: { progress?: Progress; onProgress?: (p: Progress) => Promise<unknown> } = {},
  ): Promise<{ outcome: Outcome | 'error' | 'closed' | 'file-unreadable'; verb: string; computeMs?: number; logNumber?: number; failures: number }> => {
    const origin = originOf(r);
    const extra: Partial<Interaction> = r.interaction ?? {};
    const text = r.text.trim() === '' ? 'help' : r.text;
    let verb = verbOf(text);
    // files shared with a `history` mention: downloaded by the instance that answers
    let files: { name: string; base64: string }[] | undefined;
    if (r.files?.length) {
      try {
        files = await Promise.all(r.files.map((f) => downloadFile(f, config.botToken, config.apiUrl)));
      } catch (err) {
        await tellAsker(deps, origin, [plainNotice(`Kolmo could not read the file shared with this request: ${errText(err)}. Nothing was posted.`)]).catch(() => false);
        return { outcome: 'file-unreadable', verb, failures: 0 };
      }
    }
    try {
      const result = await engine.run({
        text,
        channel: origin.log ?? origin.channel,
        user: r.user,
        now: r.now,
        budget: settings.computeBudget,
        defaults: true,
        ...(extra.variedFrom !== undefined ? { variedFrom: extra.variedFrom } : {}),
        ...(extra.preface ? { preface: extra.preface } : {}),
        ...(resumed ? { resumed } : {}),
        ...(files ? { files } : {}),
      });
      let logNumber: number | undefined;
      if (result.reply.kind === 'answer') {
        verb = result.reply.verb;
        logNumber = result.reply.logNumber;
      }
      const d = await deliver(deps, origin, result.reply, { png: result.png, note: result.chartNote }, { buttons: (a) => buttonsFor(a, origin), ...resume });
      return { outcome: d.outcome, verb, computeMs: Math.round(result.ms), logNumber, failures: d.failures.length };
    } catch (err) {
      if (stopping && err instanceof EngineError && err.reason === 'closed') return { outcome: 'closed', verb, failures: 0 };
      const why =
        err instanceof EngineError && err.reason === 'timeout'
          ? `Kolmo stopped working on this request: it needed more than the ${config.taskTimeoutSeconds} s of computing one request may use. Nothing was posted. Try fewer legs or comparison parts.`
          : err instanceof EngineError && err.reason === 'overloaded'
            ? 'Kolmo is too busy to answer this request in time; nothing was posted. Try again in a minute.'
            : 'Kolmo hit an internal problem with this request; nothing was posted. Try again.';
      log.error({ ...line(r), err: errText(err) }, 'request failed');
      await tellAsker(deps, origin, [plainNotice(why)]).catch(() => false);
      return { outcome: 'error', verb, failures: 0 };
    }
  };

  /** One claimed request, from whichever instance recorded it. */
  const handle = async (claim: Claim): Promise<void> => {
    const r: ClaimedRequest = claim.request;
    const resumed = r.attempts > 1;
    const extra = { ...(resumed ? { attempt: r.attempts } : {}) };
    if (resumed) {
      counts.resumed++;
      metrics.takeovers.inc();
    }
    if (r.attempts > MAX_ATTEMPTS || Date.now() - r.receivedMs > RESUME_WINDOW_MS) {
      // a request that keeps stopping its instance, or one too old to be worth answering now
      if (!r.progress.answered) {
        await tellAsker(deps, originOf(r), [
          plainNotice(
            `Kolmo was restarted while your request from ${r.now.slice(0, 16).replace('T', ' ')} UTC was in line and could not answer it${r.attempts > MAX_ATTEMPTS ? ' (it stopped twice while working on it)' : ''}; nothing was posted. Ask again if you still need it.`,
          ),
        ]).catch(() => false);
      }
      await claim.finish();
      metrics.requests.inc({ verb: verbOf(r.text), outcome: 'expired' });
      log.info(line(r, { ...extra, outcome: 'expired', attempts: r.attempts }), 'request');
      return;
    }
    if (stopping) {
      await claim.release();
      counts.handedBack++;
      return;
    }
    // taken over, or handed back at a shutdown: its check may be in the log already
    const got = await answer(r, resumed || r.progress.handedBack === true, { progress: r.progress, onProgress: (p) => claim.progress(p) });
    if (got.outcome === 'closed') {
      await claim.release();
      counts.handedBack++;
      log.info(line(r, { ...extra, verb: got.verb, outcome: 'handed-back' }), 'request');
      return;
    }
    await claim.finish();
    metrics.requests.inc({ verb: got.verb, outcome: got.outcome });
    metrics.answer.observe({ verb: got.verb }, Math.max(0, Date.now() - r.receivedMs) / 1000);
    log.info(
      line(r, { ...extra, verb: got.verb, outcome: got.outcome, ms: Math.max(0, Date.now() - r.receivedMs), computeMs: got.computeMs, logNumber: got.logNumber, failures: got.failures }),
      'request',
    );
  };


  /** The in-memory path (no store, or the store failed at the moment the request came). */
  const answerLocally = (r: QueuedRequest, t0: number): void => {
    counts.local++;
    if (!localInbox.accept(r.key)) {
      counts.duplicate++;
      metrics.requests.inc({ verb: verbOf(r.text), outcome: 'duplicate' });
      log.info(line(r, { outcome: 'duplicate' }), 'request');
      return;
    }
    const rate = limiter.take(r.user);
    if (!rate.ok) {
      turnAway(r, { kind: 'rate', rate }, t0);
      return;
    }
    const accepted = local.offer(r.channel, async () => {
      if (stopping) {
        await tellAsker(deps, originOf(r), [plainNotice('Kolmo is restarting and could not answer this request; nothing was posted. Ask again in a minute.')]).catch(() => false);
        log.info(line(r, { outcome: 'dropped' }), 'request');
        return;
      }
      const got = await answer(r, false);
      metrics.requests.inc({ verb: got.verb, outcome: got.outcome === 'closed' ? 'dropped' : got.outcome });
      metrics.answer.observe({ verb: got.verb }, (performance.now() - t0) / 1000);
      log.info(line(r, { verb: got.verb, outcome: got.outcome, ms: Math.round(performance.now() - t0), computeMs: got.computeMs, logNumber: got.logNumber, failures: got.failures, unrecorded: true }), 'request');
    });
    if (!accepted) turnAway(r, { kind: 'busy', depth: local.size }, t0);
  };

  const turnAway = (r: QueuedRequest, why: { kind: 'rate'; rate: Extract<RateDecision, { ok: false }> } | { kind: 'busy'; depth: number }, t0: number): void => {
    const verb = verbOf(r.text);
    if (why.kind === 'rate') {
      counts.rateLimited++;
      metrics.requests.inc({ verb, outcome: 'rate-limited' });
      log.info(line(r, { verb, outcome: 'rate-limited', notified: why.rate.notify, ms: Math.round(performance.now() - t0) }), 'request');
      if (why.rate.notify) {
        void tellAsker(deps, originOf(r), [
          plainNotice(
            `You are sending Kolmo requests faster than it answers one person (${settings.userRate.burst} at once, ${settings.userRate.perMinute} a minute); ` +
              `this one and any more in the next few seconds were not answered. Try again in ${why.rate.retryInSeconds} s.`,
          ),
        ]).catch(() => false);
      }
      return;
    }
    counts.busy++;
    metrics.requests.inc({ verb, outcome: 'busy' });
    log.info(line(r, { verb, outcome: 'busy', ms: Math.round(performance.now() - t0) }), 'request');
    void tellAsker(deps, originOf(r), [plainNotice(`Kolmo is busy (${why.depth} requests in line); nothing was posted. Try again in a minute.`)]).catch(() => false);
  };

  // ---- record first, then acknowledge ------------------------------------------------------

  type Intake = Admission | { kind: 'local' };
  const intake = new WeakMap<object, { r: QueuedRequest; got: Intake; t0: number }>();

  /** The request a delivery carries (a /kolmo command or an app mention), or null for anything else. */
  const requestOf = (body: Record<string, unknown>): QueuedRequest | null => {
    const now = new Date().toISOString();
    if (body.command === COMMAND && typeof body.channel_id === 'string' && typeof body.user_id === 'string') {
      const text = typeof body.text === 'string' ? body.text : '';
      // `/kolmo` alone opens the check form (registerCommands): nothing to record
      if (text.trim() === '' && typeof body.trigger_id === 'string' && body.trigger_id) return null;
      const responseUrl = typeof body.response_url === 'string' && body.response_url ? body.response_url : undefined;
      const key = commandKey(typeof body.trigger_id === 'string' ? body.trigger_id : undefined, responseUrl, `${body.channel_id}\n${body.user_id}\n${text}\n${now}`);
      return { key, source: 'command', channel: body.channel_id, user: body.user_id, ...(responseUrl ? { responseUrl } : {}), text, now };
    }
    const ev = body.event as { type?: string; user?: string; channel?: string; text?: string; ts?: string; thread_ts?: string } | undefined;
    if (body.type === 'event_callback' && ev?.type === 'app_mention' && ev.user && ev.channel) {
      const key = eventKey(typeof body.event_id === 'string' ? body.event_id : undefined, `${ev.channel}\n${ev.ts}`);
      const text = stripMention(ev.text ?? '', botUserId);
      // only a request of a verb that reads files (`history`) takes those attached to its message
      const files = readsFiles(text) ? fileRefsOf((ev as { files?: unknown }).files) : [];
      return { key, source: 'mention', channel: ev.channel, user: ev.user, ...(ev.thread_ts ? { threadTs: ev.thread_ts } : {}), text, now, ...(files.length ? { files } : {}) };
    }
    const dm = ev as { channel_type?: string; subtype?: string; bot_id?: string } | undefined;
    if (body.type === 'event_callback' && ev?.type === 'message' && dm?.channel_type === 'im' && dm.subtype === undefined && dm.bot_id === undefined && ev.user && ev.channel && ev.user !== botUserId) {
      // a direct message: answered in that conversation, logged in the person's private log
      const key = eventKey(typeof body.event_id === 'string' ? body.event_id : undefined, `${ev.channel}\n${ev.ts}`);
      const interaction: Interaction = { source: 'dm', log: privateLog(ev.user), flat: true };
      return { key, source: 'mention', channel: ev.channel, user: ev.user, ...(ev.thread_ts ? { threadTs: ev.thread_ts } : {}), text: (ev.text ?? '').trim(), now, interaction };
    }
    return null;
  };

  /**
   * Records the request in the shared queue: a re-sent key first (it takes nothing from the
   * asker's rate bucket), then the bucket and the bound on the line, in one transaction. The key
   * is also noted in memory, so a re-send that comes while the store is away is still caught here.
   */
  const admit = async (r: QueuedRequest): Promise<Intake> => {
    if (!counted || stopping) return { kind: 'local' };
    try {
      const got = await counted.admit(r, { ...USER_RATE_DEFAULTS, ...settings.userRate }, config.queueLimit);
      localInbox.accept(r.key);
      return got;
    } catch (err) {
      if (!(err instanceof StoreError)) throw err;
      log.warn({ err: errText(err) }, 'the request could not be recorded; answering it from memory, without the log');
      return { kind: 'local' };
    }
  };

  /** Records every request before Bolt sees it (and so before any acknowledgement). */
  const recordFirst = (app: BoltApp): void => {
    const processEvent = app.processEvent.bind(app);
    app.processEvent = async (event) => {
      const t0 = performance.now();
      const body = event.body as Record<string, unknown>;
      const r = body && typeof body === 'object' ? requestOf(body) : null;
      if (r) intake.set(body, { r, got: await admit(r), t0 });
      return processEvent(event);
    };
  };

  const after = (body: unknown, retry: RetryInfo): void => {
    const it = body && typeof body === 'object' ? intake.get(body) : undefined;
    if (!it) return;
    settle(it.r, it.got, it.t0, retry);
  };

  /** What follows the record: wake the dispatcher, or turn the request away, or answer it from memory. */
  const settle = (r: QueuedRequest, got: Intake, t0: number, retry: RetryInfo): void => {
    metrics.ack.observe((performance.now() - t0) / 1000);
    log.debug({ ...line(r), text: r.text }, 'request text');
    switch (got.kind) {
      case 'queued':
        counts.accepted++;
        dispatcher?.wake();
        return;
      case 'duplicate':
        counts.duplicate++;
        metrics.requests.inc({ verb: verbOf(r.text), outcome: 'duplicate' });
        log.info(line(r, { outcome: 'duplicate', retryNum: retry.retryNum, retryReason: retry.retryReason }), 'request');
        return;
      case 'rate':
      case 'busy':
        turnAway(r, got, t0);
        return;
      case 'local':
        answerLocally(r, t0);
        return;
    }
  };


  /**
   * The interactive listeners' way in (buttons, the check form, my desk, post to a channel): the
   * same record-first path as a typed request. The listener awaits this before it acknowledges;
   * a delivery key recorded before (by any instance) is a replayed payload, not answered again.
   * What the interactive path needs besides the text (a private log, flat messages, where notices
   * go, the check varied, the preface) travels with the request in the queue.
   */
  const submit = async (req: Incoming): Promise<void> => {
    const o = req.origin;
    const interaction: Interaction | undefined =
      o.source === 'command' && !o.log && !o.flat && !o.tellIn && req.variedFrom === undefined && !req.preface
        ? undefined
        : {
            source: o.source,
            ...(o.log ? { log: o.log } : {}),
            ...(o.flat ? { flat: true } : {}),
            ...(o.tellIn ? { tellIn: o.tellIn } : {}),
            ...(req.variedFrom !== undefined ? { variedFrom: req.variedFrom } : {}),
            ...(req.preface ? { preface: req.preface } : {}),
          };
    const r: QueuedRequest = {
      key: req.key,
      source: o.source === 'command' ? 'command' : 'mention',
      channel: o.channel,
      user: o.user,
      ...(o.threadTs ? { threadTs: o.threadTs } : {}),
      ...(req.responseUrl ? { responseUrl: req.responseUrl } : {}),
      text: req.text,
      now: req.now,
      ...(req.fileRefs?.length ? { files: req.fileRefs } : {}),
      ...(interaction ? { interaction } : {}),
    };
    settle(r, await admit(r), req.t0, {});
  };

  /**
   * An interaction that asks for no answer (a deletion, a variation that cannot be made): its
   * delivery key is recorded as already answered, so a replayed payload, on any instance, is not
   * acted on again. In memory when there is no store or it fails.
   */
  const once = async (e: { key: string; channel: string; user: string; source: string }, retry: RetryInfo): Promise<boolean> => {
    let fresh: boolean;
    try {
      fresh = counted && !stopping ? await counted.accept({ key: e.key, source: 'mention', channel: e.channel, user: e.user, text: '', now: new Date().toISOString() }, true) : localInbox.accept(e.key);
    } catch (err) {
      if (!(err instanceof StoreError)) throw err;
      fresh = localInbox.accept(e.key);
    }
    if (fresh) return true;
    counts.duplicate++;
    metrics.requests.inc({ verb: 'unknown', outcome: 'duplicate' });
    log.info({ channel: e.channel, user: e.user, source: e.source, outcome: 'duplicate', retryNum: retry.retryNum, retryReason: retry.retryReason }, 'request');
    return false;
  };

  return {
    counts,
    once,
    submit,
    recordFirst,
    after,
    handle,
    /** the dispatcher that claims for this instance (set once it exists) */
    useDispatcher(x: Dispatcher) {
      dispatcher = x;
    },
    /** no new requests are taken (shutdown) */
    stop() {
      stopping = true;
    },
    get stopping() {
      return stopping;
    },
    /** requests running or waiting on the in-memory path */
    get localSize() {
      return local.size;
    },
    drainLocal: (ms: number) => local.drain(ms),
  };
}
