/**
 * Per-channel ordering and the bound on requests in line (identities: order within a channel is
 * arrival order; channels do not wait for each other; beyond the limit nothing is queued).
 */
import { describe, it, expect } from 'vitest';
import { ChannelQueue } from '../../src/chat/queue.js';

function gate(): { open: () => void; wait: Promise<void> } {
  let open!: () => void;
  const wait = new Promise<void>((r) => (open = r));
  return { open, wait };
}

describe('channel queue', () => {
  it('runs one channel in arrival order and other channels alongside', async () => {
    const q = new ChannelQueue(100);
    const log: string[] = [];
    const g = gate();
    q.offer('A', async () => {
      await g.wait; // A1 holds channel A
      log.push('A1');
    });
    q.offer('A', async () => {
      log.push('A2');
    });
    q.offer('B', async () => {
      log.push('B1');
    });
    await new Promise((r) => setTimeout(r, 20));
    expect(log).toEqual(['B1']); // B did not wait for A; A2 waits behind A1
    g.open();
    expect(await q.drain(5000)).toBe(true);
    expect(log).toEqual(['B1', 'A1', 'A2']);
    expect(q.size).toBe(0);
  });

  it('a failing job does not stop the channel', async () => {
    const q = new ChannelQueue(10);
    const log: string[] = [];
    q.offer('A', async () => {
      throw new Error('boom');
    });
    q.offer('A', async () => {
      log.push('after');
    });
    expect(await q.drain(5000)).toBe(true);
    expect(log).toEqual(['after']);
  });

  it('refuses beyond the limit and accepts again once there is room', async () => {
    const q = new ChannelQueue(2);
    const g = gate();
    expect(q.offer('A', () => g.wait)).toBe(true);
    expect(q.offer('B', () => g.wait)).toBe(true);
    expect(q.offer('C', async () => {})).toBe(false);
    expect(q.size).toBe(2);
    g.open();
    await q.drain(5000);
    expect(q.offer('C', async () => {})).toBe(true);
    await q.drain(5000);
  });
});
