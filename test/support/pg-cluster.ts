/**
 * A throwaway PostgreSQL cluster for the tests and the benchmark: initdb in a fresh temporary
 * folder, the server listening on a Unix socket in that folder only (no TCP port at all), stopped
 * and removed afterwards. Started by test/setup/postgres.ts (vitest's globalSetup) unless
 * KOLMO_TEST_DATABASE_URL names a server to use instead.
 *
 * initdb and postgres refuse to run as root. Run as root (CI, this machine), they run as the
 * `postgres` user that Debian's package creates, in a folder that user owns, with that folder as
 * their working directory: nothing of the clone is read by them, so a clone in a 0700 folder works.
 * Run as anyone else, they run as that user.
 *
 * Durability is turned down (fsync off): the tests check Kolmo's logic against a real server, not
 * the disk; a crash of the test machine loses only the throwaway cluster.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { chmodSync, chownSync, existsSync, mkdtempSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import pg from 'pg';

export interface Cluster {
  /** connection URL of the cluster's `postgres` database as its superuser */
  url: string;
  /** the folder holding the data and the socket */
  dir: string;
  stop(): Promise<void>;
}

/** The folder with initdb and postgres: KOLMO_PG_BIN, else the newest /usr/lib/postgresql/N/bin, else PATH. */
export function pgBinDir(): string | null {
  const env = process.env.KOLMO_PG_BIN;
  if (env && existsSync(join(env, 'initdb'))) return env;
  const base = '/usr/lib/postgresql';
  if (existsSync(base)) {
    const versions = readdirSync(base)
      .filter((v) => /^\d+$/.test(v) && existsSync(join(base, v, 'bin', 'initdb')))
      .sort((a, b) => Number(b) - Number(a));
    if (versions.length) return join(base, versions[0], 'bin');
  }
  const which = spawnSync('sh', ['-c', 'command -v initdb'], { encoding: 'utf8' });
  const p = which.stdout.trim();
  return which.status === 0 && p ? p.replace(/\/initdb$/, '') : null;
}

/** uid and gid to run the server as: the `postgres` user when we are root, else ourselves. */
function serverUser(): { uid: number; gid: number } | null {
  if (process.getuid?.() !== 0) return null;
  const id = (flag: string) => spawnSync('id', [flag, 'postgres'], { encoding: 'utf8' });
  const u = id('-u');
  const g = id('-g');
  if (u.status !== 0 || g.status !== 0) {
    throw new Error('running as root, the test cluster needs the `postgres` user (Debian\'s postgresql package creates it; `bash scripts/setup.sh` installs it), or set KOLMO_TEST_DATABASE_URL');
  }
  return { uid: Number(u.stdout.trim()), gid: Number(g.stdout.trim()) };
}

export async function startCluster(): Promise<Cluster> {
  const bin = pgBinDir();
  if (!bin) {
    throw new Error('PostgreSQL is not installed (no initdb found): run `bash scripts/setup.sh`, or set KOLMO_TEST_DATABASE_URL to a server the tests may create databases on');
  }
  const user = serverUser();
  const dir = mkdtempSync(join(tmpdir(), 'kolmo-pg-'));
  if (user) chownSync(dir, user.uid, user.gid);
  chmodSync(dir, 0o700);
  const data = join(dir, 'data');
  const as = { cwd: dir, env: { PATH: process.env.PATH ?? '/usr/bin:/bin', HOME: dir, LANG: 'C', LC_ALL: 'C' }, ...(user ?? {}) };
  const init = spawnSync(join(bin, 'initdb'), ['-D', data, '-U', 'postgres', '--auth=trust', '-E', 'UTF8', '--locale=C', '--no-sync'], { ...as, encoding: 'utf8' });
  if (init.status !== 0) {
    rmSync(dir, { recursive: true, force: true });
    throw new Error(`initdb failed (${init.status}): ${init.stderr || init.stdout || String(init.error)}`);
  }
  const server: ChildProcess = spawn(
    join(bin, 'postgres'),
    [
      '-D', data,
      '-k', dir,
      '-c', 'listen_addresses=',
      '-p', '5432',
      '-c', 'fsync=off',
      '-c', 'full_page_writes=off',
      '-c', 'max_connections=300',
      '-c', 'shared_buffers=64MB',
      '-c', 'log_min_messages=fatal',
    ],
    { ...as, stdio: ['ignore', 'ignore', 'pipe'] },
  );
  let stderr = '';
  server.stderr!.on('data', (c: Buffer) => {
    if (stderr.length < 20000) stderr += c.toString('utf8');
  });
  const exited = new Promise<void>((r) => server.once('exit', () => r()));
  const url = `postgres://postgres@localhost:5432/postgres?host=${dir}`;
  const deadline = Date.now() + 30000;
  for (;;) {
    const c = new pg.Client({ connectionString: url });
    try {
      await c.connect();
      await c.query('SELECT 1');
      await c.end();
      break;
    } catch (e) {
      await c.end().catch(() => undefined);
      if (server.exitCode !== null || Date.now() > deadline) {
        server.kill('SIGKILL');
        rmSync(dir, { recursive: true, force: true });
        throw new Error(`the test cluster did not start: ${(e as Error).message}\n${stderr}`);
      }
      await new Promise((r) => setTimeout(r, 100));
    }
  }
  return {
    url,
    dir,
    stop: async () => {
      if (server.exitCode === null && server.signalCode === null) {
        server.kill('SIGINT'); // fast shutdown: open connections are closed
        const t = setTimeout(() => server.kill('SIGKILL'), 10000);
        await exited;
        clearTimeout(t);
      }
      rmSync(dir, { recursive: true, force: true });
    },
  };
}

/** `url` with another database name. */
export function withDatabase(url: string, name: string): string {
  const u = new URL(url);
  u.pathname = `/${name}`;
  return u.toString();
}

let made = 0;

/** Creates an empty database on the server at `adminUrl`; returns its URL and a function that drops it. */
export async function createDatabase(adminUrl: string, tag: string): Promise<{ url: string; drop: () => Promise<void> }> {
  const name = `kolmo_${tag.replace(/[^a-z0-9_]/gi, '_').toLowerCase()}_${process.pid}_${++made}_${Date.now() % 1e6}`;
  const c = new pg.Client({ connectionString: adminUrl });
  await c.connect();
  try {
    await c.query(`CREATE DATABASE ${name} TEMPLATE template0 ENCODING 'UTF8' LC_COLLATE 'C' LC_CTYPE 'C'`);
  } finally {
    await c.end();
  }
  return {
    url: withDatabase(adminUrl, name),
    drop: async () => {
      const d = new pg.Client({ connectionString: adminUrl });
      await d.connect();
      try {
        await d.query(`DROP DATABASE IF EXISTS ${name} WITH (FORCE)`);
      } finally {
        await d.end();
      }
    },
  };
}
