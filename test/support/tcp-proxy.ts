/**
 * A TCP proxy on 127.0.0.1 in front of a server (a TCP port or a Unix socket), for tests in which
 * the database "goes away": `cut()` drops every open connection and refuses new ones (each is
 * closed on arrival) until `restore()`. Loopback only.
 */
import { createConnection, createServer, type Server, type Socket } from 'node:net';
import type { AddressInfo } from 'node:net';

export type Target = { path: string } | { host: string; port: number };

export class TcpProxy {
  private readonly open = new Set<Socket>();
  private down = false;
  accepted = 0;

  private constructor(
    private readonly server: Server,
    readonly port: number,
  ) {}

  static async start(target: Target): Promise<TcpProxy> {
    let proxy: TcpProxy | undefined;
    const server = createServer((client) => proxy!.handle(client, target));
    await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
    proxy = new TcpProxy(server, (server.address() as AddressInfo).port);
    return proxy;
  }

  private handle(client: Socket, target: Target): void {
    this.accepted++;
    if (this.down) {
      client.destroy();
      return;
    }
    const up = createConnection(target);
    this.open.add(client);
    this.open.add(up);
    const end = () => {
      client.destroy();
      up.destroy();
      this.open.delete(client);
      this.open.delete(up);
    };
    client.on('error', end).on('close', end);
    up.on('error', end).on('close', end);
    client.pipe(up);
    up.pipe(client);
  }

  /** The database "goes away": open connections are dropped, new ones closed at once. */
  cut(): void {
    this.down = true;
    for (const s of this.open) s.destroy();
    this.open.clear();
  }

  /** The database is back. */
  restore(): void {
    this.down = false;
  }

  async close(): Promise<void> {
    this.cut();
    await new Promise<void>((r) => this.server.close(() => r()));
  }
}

/** `url` (a PostgreSQL URL, possibly on a Unix socket) rewritten to go through 127.0.0.1:`port`. */
export function throughProxy(url: string, port: number): string {
  const u = new URL(url);
  u.searchParams.delete('host');
  u.hostname = '127.0.0.1';
  u.port = String(port);
  return u.toString();
}

/** Where a PostgreSQL URL points: its Unix socket (the `host` parameter) or host and port. */
export function targetOf(url: string): Target {
  const u = new URL(url);
  const socketDir = u.searchParams.get('host');
  const port = Number(u.port || 5432);
  if (socketDir?.startsWith('/')) return { path: `${socketDir}/.s.PGSQL.${port}` };
  return { host: socketDir || u.hostname, port };
}
