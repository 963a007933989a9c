/**
 * A stand-in for the workspace platform's Web API on 127.0.0.1, for end-to-end tests and the
 * benchmark. It implements the methods the app uses, records every call with its parsed body and
 * arrival time, and can be told to fail a method's next calls (429 with Retry-After, 5xx, or an
 * `ok:false` error such as not_in_channel).
 *
 * Also served on the same port:
 *   POST /upload/<file id>     the byte upload of files.uploadV2 (step 2 of 3)
 *   GET  /download/<id>/<name> a file shared in the workspace (`url_private_download`; the bot
 *                              token in `Authorization: Bearer`, as the platform's file reference
 *                              says; without it 403), recorded as method 'download'
 *   POST /response/<id>        slash-command response URLs (ephemeral replies)
 *   GET  /socket (WebSocket)   Socket Mode: sends {"type":"hello"}, then whatever envelopes a test sends
 *
 * Several instances of the app can share one fake: an instance given `apiUrlFor(tag)` calls
 * /t/<tag>/api/…, so each call records which instance made it (`Call.tag`), and its Socket Mode
 * connection is known by the same tag (`sendEnvelopeTo(tag, …)`). `onCall` sees every call as it
 * arrives, before it is answered.
 *
 * Shapes of requests and responses follow the platform's published Web API reference
 * (auth.test, chat.postMessage, chat.postEphemeral, chat.getPermalink, chat.update, chat.delete,
 * files.getUploadURLExternal, files.completeUploadExternal, files.delete, views.open, views.update,
 * views.publish, conversations.info, apps.connections.open) and the Socket Mode protocol (hello,
 * envelopes acknowledged by envelope_id).
 *
 * The fake keeps the messages and files it was given, so a test can see what is still there after
 * a delete (`live`), and knows which channels the app is a member of: by default all of them;
 * `leave(channel)` makes posting there answer `not_in_channel`, as the platform does for a channel
 * the app was not invited to. Views opened, updated and published are kept by id (`views`).
 */
import { createServer, type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import { WebSocketServer, type WebSocket } from 'ws';

export interface Call {
  /** Web API method (e.g. chat.postMessage), or 'upload' / 'response' for the other endpoints */
  method: string;
  path: string;
  body: Record<string, unknown>;
  /** raw request bytes */
  raw: Buffer;
  /** performance.now() at arrival */
  at: number;
  authorization: string | undefined;
  /** status the fake answered with */
  status: number;
  /** `error` of an ok:false answer */
  error?: string;
  /** what the fake answered (parsed JSON or text) */
  response?: unknown;
  /** the instance that made the call (see apiUrlFor) */
  tag?: string;
}

export interface Fault {
  /** HTTP status to answer with (429, 500, ...) */
  status?: number;
  /** Retry-After seconds for a 429 */
  retryAfter?: number;
  /** answer 200 {ok:false, error} */
  error?: string;
  /** only when the call is for this channel */
  channel?: string;
}

/** A message the fake holds (posted and not deleted). */
export interface HeldMessage {
  channel: string;
  ts: string;
  thread_ts?: string;
  text?: unknown;
  blocks?: unknown;
  /** times it was changed by chat.update */
  updates: number;
}

/** A view the fake holds (opened or published). */
export interface HeldView {
  id: string;
  /** the user a home view was published for; the trigger a modal was opened with */
  user?: string;
  trigger?: string;
  view: Record<string, unknown>;
  updates: number;
}

export const FAKE_TEAM = { team_id: 'T0FAKEDESK', team: 'Fernwick Desk (invented)' };
export const FAKE_BOT = { user_id: 'UKOLMOBOT1', bot_id: 'BKOLMOBOT1', user: 'kolmo' };
const PNG_SIGNATURE = Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]);

function parseForm(raw: Buffer): Record<string, unknown> {
  const out: Record<string, unknown> = {};
  for (const [k, v] of new URLSearchParams(raw.toString('utf8'))) {
    if ((v.startsWith('[') || v.startsWith('{')) && (k === 'blocks' || k === 'files' || k === 'attachments' || k === 'view')) {
      try {
        out[k] = JSON.parse(v);
        continue;
      } catch {
        /* keep the string */
      }
    }
    out[k] = v;
  }
  return out;
}

export class FakeWebApi {
  readonly calls: Call[] = [];
  /** messages the app sent over Socket Mode (acks), parsed */
  readonly socketMessages: Array<{ at: number; data: Record<string, unknown> }> = [];
  private readonly faults = new Map<string, Fault[]>();
  private ts = 0;
  private fileNo = 0;
  private readonly sockets = new Set<WebSocket>();
  private readonly socketTags = new Map<WebSocket, string>();
  /** called with every call as it arrives, before it is answered */
  onCall?: (c: Call) => void;
  private readonly wss = new WebSocketServer({ noServer: true });
  private waiters: Array<() => void> = [];
  /** messages posted and not deleted, by `channel ts` */
  readonly messages = new Map<string, HeldMessage>();
  /** files uploaded and not deleted */
  readonly files = new Set<string>();
  /** files shared by users (served at /download/…) */
  private readonly shared = new Map<string, Buffer>();
  /** views by id */
  readonly views = new Map<string, HeldView>();
  /** channels the app is not a member of */
  private readonly outside = new Set<string>();
  private viewNo = 0;

  private constructor(
    private readonly server: Server,
    readonly port: number,
  ) {}

  /** Web API base URL, for KOLMO_API_URL */
  get apiUrl(): string {
    return `http://127.0.0.1:${this.port}/api/`;
  }

  /** Web API base URL for one of several instances: its calls carry `tag` */
  apiUrlFor(tag: string): string {
    return `http://127.0.0.1:${this.port}/t/${encodeURIComponent(tag)}/api/`;
  }

  /** Sends a Socket Mode envelope to the connection of the instance with that tag; false if it has none. */
  sendEnvelopeTo(tag: string, envelope: Record<string, unknown>): boolean {
    for (const [ws, t] of this.socketTags) {
      if (t === tag && ws.readyState === ws.OPEN) {
        ws.send(JSON.stringify(envelope));
        return true;
      }
    }
    return false;
  }

  /** tags of the open Socket Mode connections */
  get socketTagList(): string[] {
    return [...this.socketTags.entries()].filter(([ws]) => ws.readyState === ws.OPEN).map(([, t]) => t);
  }

  /**
   * A file a user shared in the workspace: returns the file object an event carries (id, name,
   * size, mimetype, url_private_download), served with the bot token at /download/….
   */
  shareFile(name: string, bytes: Buffer | string, mimetype = 'text/csv'): Record<string, unknown> {
    const id = `F0SHARED${String(++this.fileNo).padStart(4, '0')}`;
    const b = typeof bytes === 'string' ? Buffer.from(bytes, 'utf8') : bytes;
    this.shared.set(id, b);
    const url = `http://127.0.0.1:${this.port}/download/${id}/${encodeURIComponent(name)}`;
    return { id, name, title: name, mimetype, filetype: name.split('.').pop() ?? '', size: b.length, url_private: url, url_private_download: url };
  }

  responseUrl(id: string): string {
    return `http://127.0.0.1:${this.port}/response/${encodeURIComponent(id)}`;
  }

  static async start(): Promise<FakeWebApi> {
    let fake: FakeWebApi | undefined;
    const server = createServer((req, res) => {
      fake!.handle(req, res);
    });
    await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
    fake = new FakeWebApi(server, (server.address() as AddressInfo).port);
    server.on('upgrade', (req, socket, head) => {
      if (!req.url?.startsWith('/socket')) {
        socket.destroy();
        return;
      }
      const tag = new URL(req.url, 'http://127.0.0.1').searchParams.get('tag') ?? undefined;
      fake!.wss.handleUpgrade(req, socket, head, (ws) => fake!.onSocket(ws, tag));
    });
    return fake;
  }

  /** The next calls of `method` fail as described, one fault per call, in order. */
  fail(method: string, ...faults: Fault[]): void {
    const list = this.faults.get(method) ?? [];
    list.push(...faults);
    this.faults.set(method, list);
  }

  /** The app is not (or no longer) a member of `channel`: posting there answers not_in_channel. */
  leave(channel: string): void {
    this.outside.add(channel);
  }

  /** Messages still present in a channel (posted, not deleted), oldest first. */
  live(channel: string): HeldMessage[] {
    return [...this.messages.values()].filter((m) => m.channel === channel).sort((a, b) => a.ts.localeCompare(b.ts));
  }

  /** The home view last published for a user. */
  homeOf(user: string): HeldView | undefined {
    return [...this.views.values()].filter((v) => v.user === user && (v.view as { type?: string }).type === 'home').pop();
  }

  callsOf(method: string): Call[] {
    return this.calls.filter((c) => c.method === method);
  }

  /** Successful calls of `method`. */
  okCallsOf(method: string): Call[] {
    return this.calls.filter((c) => c.method === method && c.status === 200 && c.error === undefined);
  }

  /** Resolves once `pred` holds (checked after every call); rejects after `timeoutMs`. */
  async waitFor(pred: () => boolean, timeoutMs: number, what = 'condition'): Promise<void> {
    const deadline = performance.now() + timeoutMs;
    while (!pred()) {
      const left = deadline - performance.now();
      if (left <= 0) throw new Error(`fake web api: timed out after ${timeoutMs} ms waiting for ${what}; calls: ${this.calls.map((c) => c.method).join(', ')}`);
      await new Promise<void>((resolve) => {
        const t = setTimeout(resolve, Math.min(left, 250));
        this.waiters.push(() => {
          clearTimeout(t);
          resolve();
        });
      });
    }
  }

  /** Sends a Socket Mode envelope to every connected client. */
  sendEnvelope(envelope: Record<string, unknown>): void {
    const s = JSON.stringify(envelope);
    for (const ws of this.sockets) ws.send(s);
  }

  get socketCount(): number {
    return this.sockets.size;
  }

  async close(): Promise<void> {
    for (const ws of this.sockets) ws.terminate();
    this.wss.close();
    this.server.closeAllConnections();
    await new Promise<void>((resolve) => this.server.close(() => resolve()));
  }

  private notify(): void {
    const w = this.waiters;
    this.waiters = [];
    for (const f of w) f();
  }

  private onSocket(ws: WebSocket, tag?: string): void {
    this.sockets.add(ws);
    if (tag !== undefined) this.socketTags.set(ws, tag);
    ws.on('message', (data) => {
      try {
        this.socketMessages.push({ at: performance.now(), data: JSON.parse(String(data)) as Record<string, unknown> });
      } catch {
        this.socketMessages.push({ at: performance.now(), data: { unparsed: String(data) } });
      }
      this.notify();
    });
    ws.on('close', () => {
      this.sockets.delete(ws);
      this.socketTags.delete(ws);
    });
    ws.send(JSON.stringify({ type: 'hello', num_connections: 1, debug_info: { host: 'fake-127.0.0.1' }, connection_info: { app_id: 'AKOLMOFAKE' } }));
  }

  private nextTs(): string {
    this.ts++;
    return `1798761600.${String(this.ts).padStart(6, '0')}`;
  }

  private handle(req: IncomingMessage, res: ServerResponse): void {
    const chunks: Buffer[] = [];
    req.on('data', (c: Buffer) => chunks.push(c));
    req.on('end', () => {
      const at = performance.now();
      const raw = Buffer.concat(chunks);
      const url = new URL(req.url ?? '/', 'http://127.0.0.1');
      const tagged = /^\/t\/([^/]+)(\/.*)$/.exec(url.pathname);
      const tag = tagged ? decodeURIComponent(tagged[1]) : undefined;
      const path = tagged ? tagged[2] : url.pathname;
      const type = req.headers['content-type'] ?? '';
      let method: string;
      let body: Record<string, unknown> = {};
      if (path.startsWith('/api/')) {
        method = path.slice(5);
        if (type.includes('application/json')) {
          try {
            body = JSON.parse(raw.toString('utf8')) as Record<string, unknown>;
          } catch {
            body = {};
          }
        } else body = parseForm(raw);
      } else if (path.startsWith('/upload/')) {
        method = 'upload';
        const i = raw.indexOf(PNG_SIGNATURE);
        body = { file_id: decodeURIComponent(path.slice(8)), bytes: raw.length, png: i >= 0, pngOffset: i };
      } else if (path.startsWith('/download/')) {
        method = 'download';
        body = { file_id: decodeURIComponent(path.slice(10).split('/')[0] ?? '') };
      } else if (path.startsWith('/response/')) {
        method = 'response';
        try {
          body = JSON.parse(raw.toString('utf8')) as Record<string, unknown>;
        } catch {
          body = {};
        }
        body.response_id = decodeURIComponent(path.slice(10));
      } else {
        method = `unknown:${path}`;
      }
      const call: Call = { method, path, body, raw, at, authorization: req.headers.authorization, status: 200, ...(tag !== undefined ? { tag } : {}) };
      this.calls.push(call);
      this.onCall?.(call);

      const send = (status: number, payload: unknown, headers: Record<string, string> = {}) => {
        call.status = status;
        call.response = payload;
        if (payload && typeof payload === 'object' && (payload as { ok?: boolean }).ok === false) call.error = String((payload as { error?: unknown }).error);
        res.writeHead(status, { 'content-type': typeof payload === 'string' ? 'text/plain' : 'application/json', ...headers });
        res.end(typeof payload === 'string' ? payload : JSON.stringify(payload));
        this.notify();
      };

      const list = this.faults.get(method);
      const channel = String(body.channel ?? body.channel_id ?? '');
      const fi = list ? list.findIndex((f) => f.channel === undefined || f.channel === channel) : -1;
      if (list && fi >= 0) {
        const f = list.splice(fi, 1)[0];
        if (f.status === 429) return send(429, { ok: false, error: 'ratelimited' }, { 'retry-after': String(f.retryAfter ?? 1) });
        if (f.status !== undefined && f.status !== 200) return send(f.status, 'fake server error');
        return send(200, { ok: false, error: f.error ?? 'fake_error' });
      }

      if (method.startsWith('unknown:')) return send(404, 'not found');
      if (method === 'download') {
        if (!/^Bearer xox/.test(String(req.headers.authorization ?? ''))) return send(403, 'forbidden');
        const file = this.shared.get(String(body.file_id));
        if (!file) return send(404, 'not found');
        call.status = 200;
        res.writeHead(200, { 'content-type': 'application/octet-stream', 'content-length': String(file.length) });
        res.end(file);
        this.notify();
        return;
      }
      if (method !== 'upload' && method !== 'response' && !/^Bearer (xox|xapp)/.test(String(req.headers.authorization ?? ''))) {
        return send(200, { ok: false, error: 'not_authed' });
      }
      switch (method) {
        case 'auth.test':
          return send(200, { ok: true, url: 'https://fernwick-desk.invalid/', ...FAKE_TEAM, ...FAKE_BOT });
        case 'chat.postMessage': {
          if (this.outside.has(channel)) return send(200, { ok: false, error: 'not_in_channel' });
          // a user id as the channel: the app's messages with that person (the platform opens the conversation)
          const where = /^U/.test(channel) ? `D${channel.slice(1)}` : channel;
          const ts = this.nextTs();
          const threadTs = typeof body.thread_ts === 'string' && body.thread_ts !== '' ? body.thread_ts : undefined;
          this.messages.set(`${where} ${ts}`, { channel: where, ts, ...(threadTs ? { thread_ts: threadTs } : {}), text: body.text, blocks: body.blocks, updates: 0 });
          return send(200, { ok: true, channel: where, ts, message: { type: 'message', text: body.text, ts, thread_ts: body.thread_ts, bot_id: FAKE_BOT.bot_id } });
        }
        case 'chat.update': {
          const m = this.messages.get(`${channel} ${String(body.ts ?? '')}`);
          if (!m) return send(200, { ok: false, error: 'message_not_found' });
          m.text = body.text ?? m.text;
          m.blocks = body.blocks ?? m.blocks;
          m.updates++;
          return send(200, { ok: true, channel, ts: m.ts, text: m.text });
        }
        case 'chat.delete': {
          const key = `${channel} ${String(body.ts ?? '')}`;
          if (!this.messages.has(key)) return send(200, { ok: false, error: 'message_not_found' });
          this.messages.delete(key);
          return send(200, { ok: true, channel, ts: body.ts });
        }
        case 'files.delete': {
          const id = String(body.file ?? '');
          if (!this.files.has(id)) return send(200, { ok: false, error: 'file_not_found' });
          this.files.delete(id);
          return send(200, { ok: true });
        }
        case 'conversations.info': {
          if (!/^[CDG][A-Z0-9]+$/.test(channel)) return send(200, { ok: false, error: 'channel_not_found' });
          return send(200, { ok: true, channel: { id: channel, is_member: !this.outside.has(channel), is_im: channel.startsWith('D') } });
        }
        case 'views.open':
        case 'views.publish':
        case 'views.update': {
          let view = body.view as Record<string, unknown> | string | undefined;
          if (typeof view === 'string') {
            try {
              view = JSON.parse(view) as Record<string, unknown>;
            } catch {
              view = undefined;
            }
          }
          if (!view || typeof view !== 'object') return send(200, { ok: false, error: 'invalid_arguments' });
          if (method === 'views.open' && typeof body.trigger_id !== 'string') return send(200, { ok: false, error: 'invalid_trigger_id' });
          if (method === 'views.publish' && typeof body.user_id !== 'string') return send(200, { ok: false, error: 'invalid_arguments' });
          let held: HeldView | undefined;
          if (method === 'views.update') {
            held = this.views.get(String(body.view_id ?? ''));
            if (!held) return send(200, { ok: false, error: 'not_found' });
            held.view = view;
            held.updates++;
          } else if (method === 'views.publish') {
            held = [...this.views.values()].find((v) => v.user === body.user_id && (v.view as { type?: string }).type === 'home');
            if (held) {
              held.view = view;
              held.updates++;
            }
          }
          if (!held) {
            const id = `VKOLMO${String(++this.viewNo).padStart(4, '0')}`;
            held = {
              id,
              view,
              updates: 0,
              ...(method === 'views.publish' ? { user: String(body.user_id) } : { trigger: String(body.trigger_id) }),
            };
            this.views.set(id, held);
          }
          return send(200, { ok: true, view: { id: held.id, hash: `h${held.updates}`, ...held.view } });
        }
        case 'chat.postEphemeral':
          return send(200, { ok: true, message_ts: this.nextTs() });
        case 'chat.getPermalink': {
          const ts = String(body.message_ts ?? '');
          return send(200, { ok: true, channel, permalink: `https://fernwick-desk.invalid/archives/${channel}/p${ts.replace('.', '')}` });
        }
        case 'files.getUploadURLExternal': {
          const id = `FKOLMO${String(++this.fileNo).padStart(4, '0')}`;
          return send(200, { ok: true, upload_url: `http://127.0.0.1:${this.port}/upload/${id}`, file_id: id });
        }
        case 'upload':
          return send(200, `OK - ${raw.length}`);
        case 'files.completeUploadExternal': {
          const files = Array.isArray(body.files) ? (body.files as Array<{ id: string; title?: string }>) : [];
          for (const f of files) this.files.add(f.id);
          return send(200, { ok: true, files: files.map((f) => ({ id: f.id, title: f.title ?? '' })) });
        }
        case 'response':
          return send(200, 'ok');
        case 'apps.connections.open':
          return send(200, { ok: true, url: `ws://127.0.0.1:${this.port}/socket${tag !== undefined ? `?tag=${encodeURIComponent(tag)}` : ''}` });
        default:
          return send(200, { ok: false, error: 'unknown_method' });
      }
    });
  }
}
