/**
 * Prometheus metrics of one instance (prom-client), served at /metrics:
 *
 *   kolmo_requests_total{verb, outcome}        requests by verb and how they ended (answered,
 *                                              rejected, rate-limited, busy, duplicate, expired, …)
 *   kolmo_ack_seconds                          from arrival to the acknowledgement (recorded first)
 *   kolmo_answer_seconds{verb}                 from arrival to the end of delivery (across a
 *                                              take-over, from the first arrival)
 *   kolmo_queue_depth                          requests recorded and not yet answered (the whole
 *                                              cluster's, read from the store at scrape time)
 *   kolmo_requests_running                     requests this instance is running
 *   kolmo_store_errors_total{op, code}         StoreErrors seen by this instance
 *   kolmo_takeovers_total                      requests this instance took over from another claim
 *   kolmo_claims_lost_total                    requests this instance was answering, its progress
 *                                              kept in memory while the database was away, that
 *                                              another instance took over (parts may repeat)
 *
 * One registry per app (no global state), so tests can start several apps in one process.
 */
import client from 'prom-client';

export interface Metrics {
  registry: client.Registry;
  requests: client.Counter<'verb' | 'outcome'>;
  ack: client.Histogram;
  answer: client.Histogram<'verb'>;
  storeErrors: client.Counter<'op' | 'code'>;
  takeovers: client.Counter;
  claimsLost: client.Counter;
  text(): Promise<string>;
  contentType: string;
}

export function createMetrics(probe: { depth(): Promise<number | null>; running(): number }): Metrics {
  const registry = new client.Registry();
  client.collectDefaultMetrics({ register: registry, prefix: 'kolmo_process_' });
  const requests = new client.Counter({ name: 'kolmo_requests_total', help: 'Requests by verb and outcome', labelNames: ['verb', 'outcome'] as const, registers: [registry] });
  const ack = new client.Histogram({
    name: 'kolmo_ack_seconds',
    help: 'Time from the arrival of a request to its acknowledgement (recorded in the queue first)',
    buckets: [0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5],
    registers: [registry],
  });
  const answer = new client.Histogram({
    name: 'kolmo_answer_seconds',
    help: 'Time from the arrival of a request to the end of its delivery',
    labelNames: ['verb'] as const,
    buckets: [0.05, 0.1, 0.25, 0.5, 1, 2, 5, 10, 20, 30, 60],
    registers: [registry],
  });
  const storeErrors = new client.Counter({ name: 'kolmo_store_errors_total', help: 'Store errors by operation and code', labelNames: ['op', 'code'] as const, registers: [registry] });
  const takeovers = new client.Counter({ name: 'kolmo_takeovers_total', help: 'Requests taken over after an earlier claim (its instance died or stopped)', registers: [registry] });
  const claimsLost = new client.Counter({
    name: 'kolmo_claims_lost_total',
    help: 'Requests this instance was answering, with progress kept in memory while the database was away, that another instance took over',
    registers: [registry],
  });
  new client.Gauge({
    name: 'kolmo_queue_depth',
    help: 'Requests recorded and not yet answered (all instances)',
    registers: [registry],
    async collect() {
      const d = await probe.depth().catch(() => null);
      if (d !== null) this.set(d);
    },
  });
  new client.Gauge({
    name: 'kolmo_requests_running',
    help: 'Requests this instance is running',
    registers: [registry],
    collect() {
      this.set(probe.running());
    },
  });
  return { registry, requests, ack, answer, storeErrors, takeovers, claimsLost, text: () => registry.metrics(), contentType: registry.contentType };
}
