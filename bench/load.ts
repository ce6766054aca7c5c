/**
 * The load generator, run as its own process: N keep-alive connections post checks as fast as the
 * server answers, for a bounded time and count. Prints one JSON line of results.
 */
import http from 'node:http';
import { randomUUID } from 'node:crypto';

const [url, token, lineCount, connections, durationMs, maxRequests] = process.argv.slice(2);
const target = new URL(url as string);
const lines = Number(lineCount);
const conns = Number(connections);
const until = Date.now() + Number(durationMs);
const cap = Number(maxRequests);
const agent = new http.Agent({ keepAlive: true, maxSockets: conns });
const latencies: number[] = [];
let sent = 0;
let errors = 0;
const statuses = new Map<number, number>();

function post(lineId: number): Promise<number> {
  const weights = Array.from({ length: 5 }, () => Math.round((503 + (Math.random() - 0.5) * 6) * 10) / 10);
  const body = JSON.stringify({ weights, clientId: randomUUID() });
  return new Promise((resolve) => {
    const req = http.request(
      { host: target.hostname, port: target.port, path: `/api/lines/${lineId}/checks`, method: 'POST', agent, headers: { 'content-type': 'application/json', 'content-length': Buffer.byteLength(body), authorization: `Bearer ${token}` } },
      (res) => {
        res.resume();
        res.on('end', () => resolve(res.statusCode ?? 0));
      },
    );
    req.on('error', () => resolve(0));
    req.end(body);
  });
}

async function worker(index: number): Promise<void> {
  let i = index;
  while (Date.now() < until && sent < cap) {
    sent += 1;
    const started = performance.now();
    const status = await post((i % lines) + 1);
    i += conns;
    latencies.push(performance.now() - started);
    statuses.set(status, (statuses.get(status) ?? 0) + 1);
    if (status < 200 || status >= 300) errors += 1;
  }
}

const started = performance.now();
await Promise.all(Array.from({ length: conns }, (_, i) => worker(i)));
const seconds = (performance.now() - started) / 1000;
latencies.sort((a, b) => a - b);
const pick = (q: number) => latencies[Math.min(latencies.length - 1, Math.floor(q * latencies.length))] ?? 0;
process.stdout.write(`${JSON.stringify({ count: latencies.length, errors, statuses: Object.fromEntries(statuses), seconds, rps: (latencies.length - errors) / seconds, p50: pick(0.5), p99: pick(0.99) })}\n`);
agent.destroy();
