/**
 * Where each part of a reply goes in the workspace, and what the asker is told when the platform
 * refuses something.
 *
 *   rejected            → one ephemeral reply to the asker; nothing in the channel
 *   ephemeral answer    → one ephemeral reply (help, lists)
 *   answer with headline→ root line in the channel (or, asked inside a thread, the thread itself),
 *                         the full answer in the thread, then the chart PNG uploaded into the thread
 *   answer, no headline → the answer as a message in the channel (or the asker's thread)
 *
 * After posting, the log entry records its thread and permalink and whether it was delivered.
 * Every platform failure becomes a clear ephemeral message; a failed chart never holds back the
 * text answer.
 */
import type { webApi } from '@slack/bolt';
import type { Reply, Answer } from '../reply.js';
import type { LogStore, Progress } from '../verbs/ask.js';
import { scrub } from '../log.js';
import { answerMessages, BLOCKS_PER_MESSAGE_MAX, escapeMrkdwn, monoNotice, plainNotice, rootMessage, SECTION_TEXT_MAX, type Block, type Message } from './blocks.js';

type WebClient = webApi.WebClient;

/**
 * An answer's links (e.g. `log`: the thread of each check) as mrkdwn links in plain sections after
 * the monospace text, where the platform renders them (inside a code block it would not).
 * Only http(s) addresses without spaces or link syntax are kept; labels are escaped.
 */
export function linkMessages(links: Answer['links']): Message[] {
  const ok = (links ?? []).filter((l) => l && typeof l.url === 'string' && /^https?:\/\/[^\s<>|]+$/.test(l.url) && l.url.length <= 2048);
  if (ok.length === 0) return [];
  const items = ok.map((l) => `<${l.url}|${escapeMrkdwn(String(l.label)).replace(/\|/g, '¦')}>`);
  const blocks: Block[] = [];
  let cur = 'Threads:';
  for (const it of items) {
    if (cur.length + 3 + it.length > SECTION_TEXT_MAX) {
      blocks.push({ type: 'section', text: { type: 'mrkdwn', text: cur } });
      cur = it;
    } else cur += (cur === 'Threads:' ? ' ' : ' · ') + it;
  }
  blocks.push({ type: 'section', text: { type: 'mrkdwn', text: cur } });
  return [{ text: `Threads: ${ok.map((l) => l.label).join(', ')}`, blocks }];
}

/** Sends an ephemeral reply through the slash command's response URL. */
export type Respond = (msg: { response_type: 'ephemeral'; replace_original: false; text: string; blocks: Block[] }) => Promise<unknown>;

export interface Origin {
  source: 'command' | 'mention' | 'dm' | 'action' | 'form';
  /** the conversation the answer is posted in */
  channel: string;
  user: string;
  /** the log the check is numbered in when it is not the conversation's own (a person's private log) */
  log?: string;
  /** the person's messages with the app: the answer is posted as plain messages, no root line, no thread */
  flat?: boolean;
  /** where notices for the asker go instead of an ephemeral in `channel` (their messages with the app) */
  tellIn?: string;
  /** the thread the request was asked in (mentions inside a thread) */
  threadTs?: string;
  /** for slash commands: the response URL, which reaches the asker even where Kolmo is not a member */
  respond?: Respond;
}

export type Outcome = 'answered' | 'answered-no-chart' | 'ephemeral' | 'rejected' | 'undelivered';

export interface Delivery {
  outcome: Outcome;
  /** the thread the answer went to */
  threadTs?: string;
  /** every message posted (ts) and the chart file, in order */
  posted?: { ts: string[]; files: string[] };
  /** platform failures met on the way (already told to the asker) */
  failures: string[];
}

interface PlatformErrorShape {
  code?: string;
  data?: { error?: string; needed?: string };
  retryAfter?: number;
  statusCode?: number;
  message?: string;
}

/** A sentence for the asker about why the platform refused `what`. */
export function explainFailure(err: unknown, what: string): string {
  const e = (err ?? {}) as PlatformErrorShape;
  const code = e.code ?? '';
  const apiError = e.data?.error ?? '';
  if (code === 'slack_webapi_platform_error') {
    switch (apiError) {
      case 'not_in_channel':
        return `Kolmo could not post ${what}: it is not a member of this channel. Invite it with \`/invite @Kolmo\` and ask again.`;
      case 'channel_not_found':
        return `Kolmo could not post ${what}: it cannot see this channel (a private channel or conversation it has not been added to). Add it to the channel and ask again.`;
      case 'is_archived':
        return `Kolmo could not post ${what}: this channel is archived.`;
      case 'restricted_action':
      case 'restricted_action_read_only_channel':
      case 'restricted_action_thread_only_channel':
        return `Kolmo could not post ${what}: the workspace does not allow it to post here.`;
      case 'missing_scope':
        return `Kolmo could not post ${what}: its installation lacks a permission${e.data?.needed ? ` (${e.data.needed})` : ''}. Ask a workspace admin to reinstall the app from its manifest.`;
      case 'ratelimited':
      case 'rate_limited':
        return `Kolmo could not post ${what}: the workspace is rate-limiting it. Try again in a minute.`;
      case 'invalid_auth':
      case 'not_authed':
      case 'token_revoked':
      case 'account_inactive':
        return `Kolmo could not post ${what}: its workspace credentials were refused. Ask a workspace admin to check the installation.`;
      default:
        return `Kolmo could not post ${what}: the workspace refused it (${apiError || 'unknown error'}).`;
    }
  }
  if (code === 'slack_webapi_rate_limited_error' || /rate limit/i.test(e.message ?? '')) {
    return `Kolmo could not post ${what}: the workspace kept rate-limiting it after several retries. Try again in a minute.`;
  }
  if (code === 'slack_webapi_http_error') {
    return `Kolmo could not post ${what}: the workspace answered with HTTP ${e.statusCode ?? 'error'}. Try again shortly.`;
  }
  if (code === 'slack_webapi_request_error') {
    return `Kolmo could not post ${what}: the workspace could not be reached. Try again shortly.`;
  }
  // never a token in front of the asker, whatever the library put in its message
  return `Kolmo could not post ${what}: ${scrub(e.message ?? String(err)).slice(0, 300)}.`;
}

export interface DeliverDeps {
  client: WebClient;
  store: LogStore | null;
  /** told about failures that could not even reach the asker */
  onLost?: (what: string, err: unknown) => void;
}

async function postAll(client: WebClient, channel: string, threadTs: string | undefined, msgs: Message[]): Promise<string[]> {
  const ts: string[] = [];
  for (const m of msgs) {
    const r = await client.chat.postMessage({
      channel,
      text: m.text,
      blocks: m.blocks,
      ...(threadTs ? { thread_ts: threadTs } : {}),
      unfurl_links: false,
      unfurl_media: false,
    });
    ts.push(String(r.ts ?? ''));
  }
  return ts;
}

/** Sends messages only the asker sees: the response URL first (slash commands), else chat.postEphemeral. */
export async function tellAsker(deps: DeliverDeps, origin: Origin, msgs: Message[]): Promise<boolean> {
  let all = true;
  if (origin.flat || origin.tellIn) {
    // the person's own messages with the app: a plain message is theirs alone
    try {
      await postAll(deps.client, origin.tellIn ?? origin.channel, origin.tellIn ? undefined : origin.threadTs, msgs);
      return true;
    } catch (err) {
      deps.onLost?.('reply in the person’s messages with the app', err);
      return false;
    }
  }
  for (const m of msgs) {
    let sent = false;
    let lastErr: unknown;
    if (origin.respond) {
      try {
        await origin.respond({ response_type: 'ephemeral', replace_original: false, text: m.text, blocks: m.blocks });
        sent = true;
      } catch (err) {
        lastErr = err;
      }
    }
    if (!sent) {
      try {
        await deps.client.chat.postEphemeral({
          channel: origin.channel,
          user: origin.user,
          text: m.text,
          blocks: m.blocks,
          ...(origin.threadTs ? { thread_ts: origin.threadTs } : {}),
        });
        sent = true;
      } catch (err) {
        lastErr = err;
      }
    }
    if (!sent) {
      all = false;
      deps.onLost?.('ephemeral reply', lastErr);
    }
  }
  return all;
}

async function record(deps: DeliverDeps, fn: (s: LogStore) => Promise<unknown>, failures: string[]): Promise<void> {
  if (!deps.store) return;
  try {
    await fn(deps.store);
  } catch (err) {
    failures.push(`the log could not record the delivery (${err instanceof Error ? err.message : String(err)})`);
  }
}

/**
 * Delivers one reply. Never throws: every failure is told to the asker (when the platform lets
 * Kolmo reach them) and returned.
 */
export async function deliver(
  deps: DeliverDeps,
  origin: Origin,
  reply: Reply,
  chart: { png?: Uint8Array; note?: string } = {},
  opts: {
    buttons?: (a: Answer) => Block | undefined;
    /** what an earlier attempt already posted (a request taken over after its instance died) */
    progress?: Progress;
    /** told after each part reaches the platform, before the next is sent */
    onProgress?: (p: Progress) => Promise<unknown>;
  } = {},
): Promise<Delivery> {
  const failures: string[] = [];
  const log = origin.log ?? origin.channel;
  const done = opts.progress ?? {};
  const mark = async (p: Progress) => {
    try {
      await opts.onProgress?.(p);
    } catch {
      /* a progress record lost costs at most a repeat after a take-over */
    }
  };
  if (reply.kind === 'rejected') {
    if (!done.answered) await tellAsker(deps, origin, monoNotice(reply.message));
    await mark({ answered: true });
    return { outcome: 'rejected', failures };
  }
  const a: Answer = reply;
  const notes = [...a.warnings];
  if (a.ephemeral) {
    if (!done.answered) await tellAsker(deps, origin, [...monoNotice(a.text, [a.caution, ...notes].filter(Boolean).join(' · ')), ...linkMessages(a.links)]);
    await mark({ answered: true });
    return { outcome: 'ephemeral', failures };
  }

  const { client } = deps;
  const channel = origin.channel;
  const logNumber = a.logNumber;
  let threadTs: string | undefined;
  let anchorTs: string | undefined;
  const sent: string[] = [];
  const files: string[] = [];
  // the buttons go under the last message of the answer
  const withButtons = (msgs: Message[]): Message[] => {
    const b = opts.buttons?.(a);
    if (!b || msgs.length === 0) return msgs;
    const last = msgs[msgs.length - 1];
    if (last.blocks.length >= BLOCKS_PER_MESSAGE_MAX) return [...msgs, { text: 'Actions', blocks: [b] }];
    return [...msgs.slice(0, -1), { ...last, blocks: [...last.blocks, b] }];
  };
  try {
    if (done.answered) {
      // an earlier attempt posted the answer; only what came after it is left
      threadTs = done.rootTs ?? origin.threadTs;
      anchorTs = done.rootTs;
    } else if (origin.flat) {
      // the person's messages with the app: the headline first, then the answer, no thread
      const ts = await postAll(client, channel, origin.threadTs, withButtons([...answerMessages(a, a.headline.trim() ? rootMessage(origin.user, a.headline) : undefined), ...linkMessages(a.links)]));
      sent.push(...ts);
      anchorTs = ts[0];
      threadTs = origin.threadTs ?? anchorTs;
      await mark({ answered: true, ...(anchorTs ? { rootTs: anchorTs } : {}) });
    } else if (a.headline.trim() === '') {
      // nothing for the channel root: the answer itself goes where it was asked
      const ts = await postAll(client, channel, origin.threadTs, withButtons([...answerMessages(a), ...linkMessages(a.links)]));
      sent.push(...ts);
      anchorTs = ts[0];
      threadTs = origin.threadTs ?? anchorTs;
      await mark({ answered: true, ...(anchorTs ? { rootTs: anchorTs } : {}) });
    } else if (origin.threadTs) {
      threadTs = origin.threadTs;
      const ts = await postAll(client, channel, threadTs, withButtons([...answerMessages(a, rootMessage(origin.user, a.headline)), ...linkMessages(a.links)]));
      sent.push(...ts);
      anchorTs = ts[0];
      await mark({ answered: true, ...(anchorTs ? { rootTs: anchorTs } : {}) });
    } else {
      if (done.rootTs) {
        threadTs = done.rootTs;
      } else {
        const rm = rootMessage(origin.user, a.headline);
        const root = await client.chat.postMessage({ channel, text: rm.text, blocks: rm.blocks, unfurl_links: false, unfurl_media: false });
        threadTs = String(root.ts ?? '');
        await mark({ rootTs: threadTs });
      }
      sent.push(threadTs);
      anchorTs = threadTs;
      try {
        sent.push(...(await postAll(client, channel, threadTs, withButtons([...answerMessages(a), ...linkMessages(a.links)]))));
        await mark({ answered: true });
      } catch (err) {
        // the root line is in the channel but the answer is not: say so in the thread if possible
        failures.push(explainFailure(err, 'the answer in the thread'));
        throw err;
      }
    }
  } catch (err) {
    const why = failures[0] ?? explainFailure(err, 'the answer');
    if (failures.length === 0) failures.push(why);
    if (logNumber !== undefined) await record(deps, (s) => s.setDelivery(log, logNumber, 'undelivered'), failures);
    if (logNumber !== undefined && sent.length > 0) await record(deps, (s) => s.setPosted(log, logNumber, { channel, ts: sent, files: [] }), failures);
    // told once: the reason and the answer itself in one ephemeral message (more only if the
    // answer is longer than one message holds)
    await tellAsker(deps, origin, answerMessages(a, plainNotice(`${why}${logNumber !== undefined ? ` (The check is in the log as #${logNumber}.)` : ''}`)));
    return { outcome: 'undelivered', threadTs, failures };
  }

  if (logNumber !== undefined && threadTs) {
    let permalink: string | null = null;
    try {
      const p = await client.chat.getPermalink({ channel, message_ts: anchorTs ?? threadTs });
      permalink = typeof p.permalink === 'string' ? p.permalink : null;
    } catch {
      permalink = null; // the link is a convenience; the thread is recorded without it
    }
    const ts = threadTs;
    await record(deps, (s) => s.setThread(log, logNumber, ts, permalink), failures);
    // recorded now, before the chart: a delete pressed meanwhile finds the messages
    await record(deps, (s) => s.setPosted(log, logNumber, { channel, ts: sent, files: [] }), failures);
  }

  let outcome: Outcome = 'answered';
  if (chart.png && done.chart) {
    // uploaded by an earlier attempt
  } else if (chart.png && threadTs) {
    try {
      const up = await client.files.uploadV2({
        channel_id: channel,
        thread_ts: threadTs,
        file: Buffer.from(chart.png.buffer, chart.png.byteOffset, chart.png.byteLength),
        filename: logNumber !== undefined ? `kolmo-check-${logNumber}.png` : 'kolmo-chart.png',
        title: logNumber !== undefined ? `Check #${logNumber}` : 'Kolmo chart',
        alt_text: a.headline || 'Kolmo chart',
      });
      files.push(...fileIdsOf(up));
      await mark({ chart: true });
    } catch (err) {
      outcome = 'answered-no-chart';
      const why = explainFailure(err, 'the chart');
      failures.push(why);
      notes.push(`${why} The text answer is in the thread.`);
    }
  } else if (chart.note) {
    outcome = 'answered-no-chart';
    notes.push(`The chart was not drawn: ${chart.note}. The text answer is in the thread.`);
  }
  if (logNumber !== undefined) {
    await record(deps, (s) => s.setDelivery(log, logNumber, 'delivered'), failures);
    await record(deps, (s) => s.setPosted(log, logNumber, { channel, ts: sent, files }), failures);
    // deleted while the chart was on its way: the chart goes too
    let gone = false;
    await record(
      deps,
      async (s) => {
        gone = !!(await s.get(log, logNumber))?.deletedAt;
      },
      failures,
    );
    if (gone) {
      for (const file of files) await client.files.delete({ file }).catch(() => undefined);
      for (const t of sent) await client.chat.delete({ channel, ts: t }).catch(() => undefined);
      return { outcome, threadTs, failures, posted: { ts: sent, files } };
    }
  }
  for (const f of failures.filter((f) => f.startsWith('the log'))) notes.push(f);
  if (notes.length > 0) await tellAsker(deps, { ...origin, threadTs }, [plainNotice(notes.join('\n'))]);
  return { outcome, threadTs, failures, posted: { ts: sent, files } };
}

/** The file ids in a files.uploadV2 answer ({ files: [{ files: [{ id }] }] }, or flatter). */
export function fileIdsOf(up: unknown): string[] {
  const out: string[] = [];
  const walk = (v: unknown, depth: number): void => {
    if (depth > 4 || !v || typeof v !== 'object') return;
    if (Array.isArray(v)) {
      for (const x of v) walk(x, depth + 1);
      return;
    }
    const o = v as Record<string, unknown>;
    if (typeof o.id === 'string' && /^F[A-Z0-9]+$/.test(o.id)) out.push(o.id);
    if (o.files) walk(o.files, depth + 1);
  };
  walk(up, 0);
  return [...new Set(out)];
}
