/**
 * Live clients for the fan-out figure, in a process of their own: opens N WebSockets, says "ready",
 * then reports when the first message whose type starts with the wanted prefix reached the last of them.
 */
import WebSocket from 'ws';

const [url, count, token, wanted] = process.argv.slice(2);
const n = Number(count);
const arrivals: number[] = [];
let open = 0;
const sockets: WebSocket[] = [];
for (let i = 0; i < n; i += 1) {
  const ws = new WebSocket(url as string, token ? { headers: { authorization: `Bearer ${token}` } } : {});
  ws.on('open', () => {
    open += 1;
    if (open === n) setTimeout(() => process.stdout.write('ready\n'), 1200); // past Heft's resume grace
  });
  let got = false;
  ws.on('message', (data) => {
    if (got) return;
    const text = data.toString();
    if (!text.includes(`"type":"${wanted}`)) return;
    got = true;
    arrivals.push(performance.timeOrigin + performance.now());
    if (arrivals.length === n) {
      process.stdout.write(`${JSON.stringify({ first: Math.min(...arrivals), last: Math.max(...arrivals), clients: n })}\n`);
      for (const s of sockets) s.terminate();
      process.exit(0);
    }
  });
  ws.on('error', (err) => {
    process.stderr.write(`client error ${err.message}\n`);
  });
  sockets.push(ws);
}
setTimeout(() => {
  process.stdout.write(`${JSON.stringify({ timeout: true, received: arrivals.length, clients: n })}\n`);
  process.exit(1);
}, 60_000).unref();
