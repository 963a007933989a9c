/**
 * Files shared with an @-mention: `history SYMBOL` reads the closes from a CSV/TSV file attached
 * to the same message. The file is downloaded from the `url_private_download` the event names,
 * with the bot token (scope `files:read`), and handed to the engine as bytes (base64).
 *
 * Least privilege: only for a `history` request, only files attached to the message that
 * mentions Kolmo, at most CLOSES_FILE_BYTES each, and the token is sent only to the platform's
 * file host or to the Web API's own origin (a proxy or the test double set by KOLMO_API_URL).
 */
import { CLOSES_FILE_BYTES } from '../verbs/ask.js';

/** What the app keeps of a file in an event (plain data: it may wait in the queue). */
export interface FileRef {
  name: string;
  url: string;
  size?: number;
}

/** The platform's file host (downloads of `url_private_download`). */
const FILE_HOST = 'files.slack.com';
const DOWNLOAD_TIMEOUT_MS = 15_000;

/** The file objects of an event, reduced to what a download needs (anything malformed is skipped). */
export function fileRefsOf(files: unknown): FileRef[] {
  if (!Array.isArray(files)) return [];
  const out: FileRef[] = [];
  for (const f of files.slice(0, 5)) {
    const o = f as { name?: unknown; title?: unknown; url_private_download?: unknown; url_private?: unknown; size?: unknown };
    const url = typeof o.url_private_download === 'string' ? o.url_private_download : typeof o.url_private === 'string' ? o.url_private : undefined;
    if (!url) continue;
    const name = typeof o.name === 'string' && o.name ? o.name : typeof o.title === 'string' && o.title ? o.title : 'shared file';
    out.push({ name: name.slice(0, 200), url, ...(typeof o.size === 'number' ? { size: o.size } : {}) });
  }
  return out;
}

/** May the bot token go to this URL? The platform's file host over https, or the Web API's own origin. */
export function downloadAllowed(url: string, apiUrl: string | undefined): boolean {
  let u: URL;
  try {
    u = new URL(url);
  } catch {
    return false;
  }
  if (u.protocol === 'https:' && u.hostname === FILE_HOST) return true;
  if (!apiUrl) return false;
  try {
    return u.origin === new URL(apiUrl).origin;
  } catch {
    return false;
  }
}

/** Downloads one shared file; throws an Error whose message can be shown to the asker. */
export async function downloadFile(ref: FileRef, token: string, apiUrl: string | undefined): Promise<{ name: string; base64: string }> {
  if (!downloadAllowed(ref.url, apiUrl)) throw new Error(`${ref.name}: not a file of this workspace`);
  if (ref.size !== undefined && ref.size > CLOSES_FILE_BYTES) throw new Error(`${ref.name} is ${ref.size} bytes; at most ${CLOSES_FILE_BYTES} are read`);
  let res: Response;
  try {
    res = await fetch(ref.url, { headers: { authorization: `Bearer ${token}` }, signal: AbortSignal.timeout(DOWNLOAD_TIMEOUT_MS) });
  } catch (e) {
    throw new Error(`${ref.name} could not be downloaded (${e instanceof Error && e.name === 'TimeoutError' ? 'no answer in time' : 'connection failed'})`);
  }
  if (!res.ok) throw new Error(`${ref.name} could not be downloaded (HTTP ${res.status})`);
  const reader = res.body?.getReader();
  const chunks: Uint8Array[] = [];
  let total = 0;
  if (reader) {
    for (;;) {
      const { done, value } = await reader.read();
      if (done) break;
      total += value.byteLength;
      if (total > CLOSES_FILE_BYTES) {
        await reader.cancel().catch(() => undefined);
        throw new Error(`${ref.name} is larger than ${CLOSES_FILE_BYTES} bytes`);
      }
      chunks.push(value);
    }
  }
  return { name: ref.name, base64: Buffer.concat(chunks).toString('base64') };
}
