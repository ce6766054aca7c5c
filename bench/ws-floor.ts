/** The fan-out floor: a bare ws server that broadcasts one message of a given size when told over HTTP. */
import http from 'node:http';
import { WebSocketServer } from 'ws';

const [port, bytes] = process.argv.slice(2);
const message = JSON.stringify({ seq: 1, type: 'alert-opened', at: new Date().toISOString(), padding: 'x'.repeat(Math.max(0, Number(bytes) - 80)) });
const server = http.createServer((req, res) => {
  if (req.url === '/broadcast') {
    for (const client of wss.clients) client.send(message);
    res.end('sent');
    return;
  }
  res.end('ok');
});
const wss = new WebSocketServer({ server, path: '/live' });
server.listen(Number(port), '127.0.0.1', () => process.stdout.write('ws floor ready\n'));
