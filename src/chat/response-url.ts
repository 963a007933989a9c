/**
 * Ephemeral replies through a slash command's response URL, which reaches the asker even where
 * Kolmo is not a member of the channel.
 */
import type { Respond } from './deliver.js';
import { API_TIMEOUT_MS } from './platform.js';

const sleep = (ms: number) => new Promise<void>((r) => setTimeout(r, ms));

/**
 * Ephemeral replies through a slash command's response URL (http(s) only), each POST cut off
 * after API_TIMEOUT_MS and retried twice on 5xx, 429 or a dropped connection. A 4xx (an expired
 * or used-up URL) is not retried: tellAsker then falls back to chat.postEphemeral.
 */
export function responder(url: string | undefined): Respond | undefined {
  if (!url) return undefined;
  try {
    const u = new URL(url);
    if (u.protocol !== 'https:' && u.protocol !== 'http:') return undefined;
  } catch {
    return undefined;
  }
  return async (msg) => {
    for (let attempt = 0; ; attempt++) {
      let retry = false;
      try {
        const res = await fetch(url, {
          method: 'POST',
          headers: { 'content-type': 'application/json; charset=utf-8' },
          body: JSON.stringify(msg),
          redirect: 'error',
          signal: AbortSignal.timeout(API_TIMEOUT_MS),
        });
        await res.arrayBuffer().catch(() => undefined);
        if (res.ok) return;
        retry = res.status >= 500 || res.status === 429;
        throw Object.assign(new Error(`the response URL answered HTTP ${res.status}`), { statusCode: res.status, code: 'kolmo_response_url' });
      } catch (err) {
        const network = !(err as { code?: string }).code?.startsWith('kolmo_');
        if (!(retry || network) || attempt >= 2) throw err;
      }
      await sleep(200 * 2 ** attempt);
    }
  };
}
