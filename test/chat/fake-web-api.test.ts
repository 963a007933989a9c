/** The loopback fake of the Web API keeps messages, files and views, as the e2e tests rely on. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { WebClient } from '@slack/web-api';
import { FakeWebApi } from './fake-web-api.js';
import { BOT_TOKEN } from './harness.js';

let fake: FakeWebApi;
let client: WebClient;

beforeAll(async () => {
  fake = await FakeWebApi.start();
  client = new WebClient(BOT_TOKEN, { slackApiUrl: fake.apiUrl, retryConfig: { retries: 0 } });
});
afterAll(async () => {
  await fake.close();
});

describe('the fake Web API', () => {
  it('keeps messages: update changes one, delete removes it, an unknown one is not found', async () => {
    const root = await client.chat.postMessage({ channel: 'CFAKE00001', text: 'root' });
    const reply = await client.chat.postMessage({ channel: 'CFAKE00001', text: 'reply', thread_ts: root.ts! });
    expect(fake.live('CFAKE00001').map((m) => m.text)).toEqual(['root', 'reply']);
    await client.chat.update({ channel: 'CFAKE00001', ts: root.ts!, text: 'root, changed' });
    expect(fake.live('CFAKE00001')[0]).toMatchObject({ text: 'root, changed', updates: 1 });
    await client.chat.delete({ channel: 'CFAKE00001', ts: reply.ts! });
    expect(fake.live('CFAKE00001').map((m) => m.ts)).toEqual([root.ts]);
    await expect(client.chat.delete({ channel: 'CFAKE00001', ts: reply.ts! })).rejects.toMatchObject({ data: { error: 'message_not_found' } });
    expect(fake.okCallsOf('chat.delete')).toHaveLength(1);
  });

  it('answers not_in_channel for a channel the app is not in, and posts to a person in their messages with the app', async () => {
    fake.leave('CFAKEOUT01');
    await expect(client.chat.postMessage({ channel: 'CFAKEOUT01', text: 'x' })).rejects.toMatchObject({ data: { error: 'not_in_channel' } });
    expect((await client.conversations.info({ channel: 'CFAKEOUT01' })).channel).toMatchObject({ is_member: false });
    const dm = await client.chat.postMessage({ channel: 'UTRADERAA1', text: 'private' });
    expect(dm.channel).toBe('DTRADERAA1');
  });

  it('opens, updates and publishes views', async () => {
    const opened = await client.views.open({ trigger_id: '1.2.3', view: { type: 'modal', title: { type: 'plain_text', text: 'T' }, blocks: [] } });
    const id = opened.view!.id!;
    await client.views.update({ view_id: id, view: { type: 'modal', title: { type: 'plain_text', text: 'T2' }, blocks: [] } });
    expect(fake.views.get(id)).toMatchObject({ updates: 1, trigger: '1.2.3', view: { title: { text: 'T2' } } });
    await client.views.publish({ user_id: 'UTRADERAA1', view: { type: 'home', blocks: [] } });
    await client.views.publish({ user_id: 'UTRADERAA1', view: { type: 'home', blocks: [{ type: 'divider' }] } });
    expect(fake.homeOf('UTRADERAA1')).toMatchObject({ updates: 1, view: { blocks: [{ type: 'divider' }] } });
    await expect(client.views.update({ view_id: 'VNOPE', view: { type: 'modal', title: { type: 'plain_text', text: 'x' }, blocks: [] } })).rejects.toMatchObject({ data: { error: 'not_found' } });
  });

  it('deletes a file it holds', async () => {
    const up = await client.files.getUploadURLExternal({ filename: 'c.png', length: 3 });
    await client.files.completeUploadExternal({ files: [{ id: up.file_id!, title: 'c' }] });
    expect(fake.files.has(up.file_id!)).toBe(true);
    await client.files.delete({ file: up.file_id! });
    expect(fake.files.has(up.file_id!)).toBe(false);
  });
});
