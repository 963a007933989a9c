/**
 * Helpers for the robustness tests: the real app (`node dist/src/main.js`) started in a folder the
 * test keeps (so a second start finds the first one's log and request queue), and a fault proxy between
 * the app and the fake Web API that drops or stalls chosen calls — connection faults the fake
 * itself does not make. Loopback only; every wait bounded.
 */
import type { ChildProcess } from 'node:child_process';
import { createServer, request, type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import { SECRET, launch, sign } from '../chat/harness.js';

export interface App {
  child: ChildProcess;
  port: number;
  lines: Array<Record<string, unknown>>;
  output: () => string;
  exited: Promise<number | null>;
  /** SIGTERM (or the given signal); resolves with the exit code, SIGKILL after `timeoutMs` */
  stop: (signal?: NodeJS.Signals, timeoutMs?: number) => Promise<number | null>;
}

/** Starts the app with its log at `dir`/kolmo.db; waits for "listening" (HTTP) or "connected" (Socket Mode). */
export async function startIn(dir: string, env: Record<string, string>, timeoutMs = 30000): Promise<App> {
  const { child, port, lines, output, exited } = await launch(dir, env, timeoutMs);
  return {
    child,
    port,
    lines,
    output,
    exited,
    stop: async (signal = 'SIGTERM', ms = 30000) => {
      if (child.exitCode !== null || child.signalCode !== null) return child.exitCode;
      child.kill(signal);
      const t = setTimeout(() => child.kill('SIGKILL'), ms);
      const code = await exited;
      clearTimeout(t);
      return code;
    },
  };
}

/** Resolves once the async `pred` holds (one check at a time), polling every 25 ms; throws after `timeoutMs`. */
export async function untilAsync(pred: () => Promise<boolean>, timeoutMs: number, what: string): Promise<void> {
  const deadline = performance.now() + timeoutMs;
  while (!(await pred())) {
    if (performance.now() > deadline) throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 25));
  }
}

/** Resolves once `pred` holds, polling every 25 ms; throws after `timeoutMs`. */
export function until(pred: () => boolean, timeoutMs: number, what: string): Promise<void> {
  return untilAsync(async () => pred(), timeoutMs, what);
}

type Mode = 'drop' | 'hang';

/**
 * An HTTP proxy on 127.0.0.1 in front of the fake Web API. `drop(method, n)`: the next n calls of
 * that Web API method (path /api/<method>) lose their connection before any answer; `hang`: they
 * get no answer at all (the client's own timeout must end them). Everything else is passed through.
 */
export class FaultProxy {
  readonly seen: Array<{ method: string; fault?: Mode }> = [];
  private readonly faults = new Map<string, Mode[]>();
  private readonly held = new Set<ServerResponse>();
  private constructor(
    private readonly server: Server,
    readonly port: number,
    private readonly target: number,
  ) {}

  static async start(targetPort: number): Promise<FaultProxy> {
    let proxy: FaultProxy | undefined;
    const server = createServer((req, res) => proxy!.handle(req, res));
    await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
    proxy = new FaultProxy(server, (server.address() as AddressInfo).port, targetPort);
    return proxy;
  }

  get apiUrl(): string {
    return `http://127.0.0.1:${this.port}/api/`;
  }

  drop(method: string, n = 1): void {
    this.add(method, 'drop', n);
  }

  hang(method: string, n = 1): void {
    this.add(method, 'hang', n);
  }

  private add(method: string, mode: Mode, n: number): void {
    const l = this.faults.get(method) ?? [];
    for (let i = 0; i < n; i++) l.push(mode);
    this.faults.set(method, l);
  }

  private handle(req: IncomingMessage, res: ServerResponse): void {
    const method = (req.url ?? '').replace(/^\/api\//, '').replace(/\?.*$/, '');
    const fault = this.faults.get(method)?.shift();
    this.seen.push({ method, ...(fault ? { fault } : {}) });
    if (fault === 'drop') {
      req.resume();
      req.on('end', () => req.socket.destroy());
      return;
    }
    if (fault === 'hang') {
      req.resume();
      this.held.add(res);
      return;
    }
    const up = request(
      { host: '127.0.0.1', port: this.target, path: req.url, method: req.method, headers: req.headers },
      (r) => {
        res.writeHead(r.statusCode ?? 502, r.headers);
        r.pipe(res);
      },
    );
    up.on('error', () => res.destroy());
    req.pipe(up);
  }

  async close(): Promise<void> {
    for (const r of this.held) r.destroy();
    this.server.closeAllConnections();
    await new Promise<void>((r) => this.server.close(() => r()));
  }
}

/** POSTs a signed body (the platform's v0 scheme, see test/chat/harness.ts) with extra headers, e.g. X-Slack-Retry-Num. */
export function signedPost(port: number, body: string | Buffer, contentType: string, headers: Record<string, string> = {}): Promise<{ status: number; body: string }> {
  const timestamp = Math.floor(Date.now() / 1000);
  const raw = typeof body === 'string' ? Buffer.from(body) : body;
  const signature = sign(SECRET, timestamp, raw.toString('utf8'));
  return new Promise((resolve, reject) => {
    const req = request(
      {
        host: '127.0.0.1',
        port,
        path: '/slack/events',
        method: 'POST',
        headers: {
          'content-type': contentType,
          'content-length': raw.length,
          'x-slack-request-timestamp': String(timestamp),
          'x-slack-signature': signature,
          ...headers,
        },
        timeout: 10000,
      },
      (res) => {
        const chunks: Buffer[] = [];
        res.on('data', (c: Buffer) => chunks.push(c));
        res.on('end', () => resolve({ status: res.statusCode ?? 0, body: Buffer.concat(chunks).toString('utf8') }));
      },
    );
    req.on('timeout', () => req.destroy(new Error('request to the app timed out')));
    req.on('error', reject);
    req.end(raw);
  });
}
