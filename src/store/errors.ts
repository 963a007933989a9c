/**
 * The one error the store throws. Foreseeable faults of the file system and of SQLite (read-only
 * file, disk full, lock held too long, file missing or damaged) and input the store refuses to
 * keep are all turned into a StoreError with a short code and a message a desk user can read,
 * so that the caller can still post the answer, flagged as not logged.
 */

export type StoreErrorCode =
  /** the file or the connection is read-only: nothing can be written */
  | 'readonly'
  /** the disk (or the log's configured size cap) is full */
  | 'full'
  /** another process held the write lock longer than the busy timeout */
  | 'busy'
  /** the file cannot be opened, is damaged, is not a log, or an I/O error occurred */
  | 'unavailable'
  /** the store refused the input (empty channel, non-finite number, request too large) */
  | 'invalid';

/** What the store was doing when it failed. */
export type StoreOp = 'open' | 'read' | 'write';

const OP_PREFIX: Record<StoreOp, string> = {
  open: 'the log could not be opened',
  read: 'the log could not be read',
  write: 'the log could not be written',
};

export class StoreError extends Error {
  override readonly name = 'StoreError';
  readonly code: StoreErrorCode;
  readonly op: StoreOp;
  /** the SQLite or system error code behind it, e.g. "SQLITE_FULL", "ENOENT" */
  readonly sqliteCode?: string;

  constructor(code: StoreErrorCode, op: StoreOp, reason: string, options?: { cause?: unknown; sqliteCode?: string }) {
    super(`${OP_PREFIX[op]}: ${reason}`, options?.cause === undefined ? undefined : { cause: options.cause });
    this.code = code;
    this.op = op;
    if (options?.sqliteCode !== undefined) this.sqliteCode = options.sqliteCode;
  }
}

/** Shape of the errors better-sqlite3 (SqliteError) and node's fs throw: both carry a string `code`. */
function codeOf(err: unknown): string | undefined {
  if (err && typeof err === 'object' && 'code' in err) {
    const c = (err as { code: unknown }).code;
    if (typeof c === 'string') return c;
  }
  return undefined;
}

/**
 * Maps an error thrown by better-sqlite3 or node:fs to a StoreError. A StoreError passes through
 * unchanged. Anything unforeseen (a programming error such as a TypeError) is re-thrown as is:
 * hiding it behind "unavailable" would hide a bug.
 */
export function toStoreError(err: unknown, op: StoreOp, context: { path?: string; busyTimeoutMs?: number } = {}): StoreError {
  if (err instanceof StoreError) return err;
  const code = codeOf(err);
  const where = context.path && context.path !== ':memory:' ? ` (${context.path})` : '';
  const opts = { cause: err, sqliteCode: code };
  if (code === undefined) throw err;

  // SQLite primary codes come with extended suffixes: SQLITE_READONLY_DBMOVED, SQLITE_BUSY_SNAPSHOT, ...
  if (code === 'SQLITE_READONLY_DIRECTORY') {
    // the file may be writable, but SQLite cannot create the -wal/-shm files next to it
    return new StoreError('readonly', op, `the log folder is read-only${where}`, opts);
  }
  if (code.startsWith('SQLITE_READONLY')) return new StoreError('readonly', op, `the log file is read-only${where}`, opts);
  if (code.startsWith('SQLITE_FULL')) return new StoreError('full', op, 'disk full', opts);
  if (code.startsWith('SQLITE_BUSY') || code.startsWith('SQLITE_LOCKED')) {
    const t = context.busyTimeoutMs !== undefined ? ` for more than ${(context.busyTimeoutMs / 1000).toFixed(1)} s` : '';
    return new StoreError('busy', op, `the log is busy (another process held it${t}); try again`, opts);
  }
  if (code.startsWith('SQLITE_CANTOPEN')) return new StoreError('unavailable', op, `the log file cannot be opened${where}`, opts);
  if (code.startsWith('SQLITE_NOTADB')) return new StoreError('unavailable', op, `the file is not a Kolmo log${where}`, opts);
  if (code.startsWith('SQLITE_CORRUPT')) return new StoreError('unavailable', op, `the log file is damaged${where}`, opts);
  if (code.startsWith('SQLITE_IOERR')) return new StoreError('unavailable', op, `input/output error on the log file${where}`, opts);
  if (code.startsWith('SQLITE_PERM') || code.startsWith('SQLITE_AUTH')) {
    return new StoreError('unavailable', op, `access to the log file was refused${where}`, opts);
  }
  if (code === 'SQLITE_TOOBIG') return new StoreError('invalid', op, 'the entry is too large to store', opts);
  if (code === 'ENOSPC') return new StoreError('full', op, 'disk full', opts);
  if (code === 'EROFS') return new StoreError('readonly', op, `the file system is read-only${where}`, opts);
  if (code === 'EACCES' || code === 'EPERM') return new StoreError('unavailable', op, `permission denied${where}`, opts);
  if (code === 'ENOENT' || code === 'ENOTDIR') return new StoreError('unavailable', op, `the log folder does not exist${where}`, opts);
  if (code.startsWith('SQLITE_') || /^E[A-Z]+$/.test(code)) {
    return new StoreError('unavailable', op, `${code}${where}`, opts);
  }
  throw err;
}

/**
 * Maps an error of node-postgres (a server error carries the SQLSTATE in `code`; a connection
 * problem is a Node system error such as ECONNREFUSED, or a plain Error from the client or the
 * pool) to the same StoreError codes the SQLite backend uses. `where` names the database without
 * its password. As for SQLite, an error that is not a database fault (a TypeError, a syntax error
 * in our own SQL) is re-thrown as is.
 * SQLSTATE classes: PostgreSQL documentation, Appendix A "PostgreSQL Error Codes".
 */
export function pgStoreError(err: unknown, op: StoreOp, where: string): StoreError {
  if (err instanceof StoreError) return err;
  const code = codeOf(err);
  const message = err instanceof Error ? err.message : String(err);
  const opts = { cause: err, sqliteCode: code };
  const at = ` (${where})`;
  if (code === undefined) {
    // the client's and the pool's own errors carry no code; these are all a lost or missing connection
    if (/connection terminated|connection timeout|timeout exceeded when trying to connect|not queryable|after calling end on the pool|connection error|Query read timeout/i.test(message)) {
      return new StoreError('unavailable', op, `the database cannot be reached${at}: ${message}`, opts);
    }
    throw err;
  }
  if (/^E[A-Z]+$/.test(code)) {
    const why =
      code === 'ECONNREFUSED' ? 'the connection was refused'
      : code === 'ENOTFOUND' || code === 'EAI_AGAIN' ? 'the host name is not known'
      : code === 'ETIMEDOUT' ? 'the connection timed out'
      : code === 'ECONNRESET' || code === 'EPIPE' ? 'the connection was dropped'
      : code === 'ENOENT' ? 'there is no server socket at that path'
      : code === 'EACCES' ? 'permission denied on the socket'
      : code;
    return new StoreError('unavailable', op, `the database cannot be reached${at}: ${why}`, opts);
  }
  const cls = code.slice(0, 2);
  if (code === '53100') return new StoreError('full', op, 'the database disk is full', opts);
  if (code === '25006') return new StoreError('readonly', op, `the database is read-only${at}`, opts);
  if (code === '42501') return new StoreError('readonly', op, `the database refused the write (no privilege)${at}`, opts);
  if (code === '40001' || code === '40P01' || code === '55P03' || code === '57014' || code === '53300' || code === '53400') {
    return new StoreError('busy', op, 'the database is busy (a lock or a connection limit held the request too long); try again', opts);
  }
  if (cls === '22' || code === '54000') return new StoreError('invalid', op, `the database refused the input (${message})`, opts);
  if (cls === '08' || cls === '57' || cls === '28' || cls === '3D' || cls === '53' || cls === '58' || cls === 'XX' || code === '42P01') {
    return new StoreError('unavailable', op, `the database cannot be used${at}: ${message}`, opts);
  }
  if (cls === '23') return new StoreError('unavailable', op, `the database refused a write it should have taken (${message})`, opts);
  throw err;
}
