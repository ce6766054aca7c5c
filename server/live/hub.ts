import type { WebSocket } from 'ws';
import type { LiveRepository } from './repository.js';

export interface HubOptions {
  live: LiveRepository;
  /** A client whose unsent bytes pass this is dropped (it will reconnect and resume). */
  maxBufferedBytes?: number;
  /** More missed messages than this and the client is told to reload instead of being replayed. */
  maxReplay?: number;
  heartbeatMs?: number;
  /** How long a new client has to send its resume before it simply follows live from its hello. */
  resumeGraceMs?: number;
  now?: () => number;
}

interface Client {
  socket: WebSocket;
  /** The last seq this client has been sent; it is only ever sent messages after it. */
  lastSent: number;
  /** False until the client has said where to resume (or the grace ran out): live messages wait in storage. */
  ready: boolean;
  alive: boolean;
  grace: NodeJS.Timeout | null;
}

export interface HubStats {
  clients: number;
  dropped: number;
  sent: number;
}

/**
 * The live feed's fan-out. Messages arrive already numbered and stored (in the same transaction as
 * their change), so a reconnecting client is replayed from storage and then follows live, missing
 * nothing and seeing nothing twice. Each client's send buffer is bounded; a silent one is pinged
 * and dropped.
 */
export class LiveHub {
  private readonly clients = new Set<Client>();
  private readonly live: LiveRepository;
  private readonly maxBuffered: number;
  private readonly maxReplay: number;
  private readonly heartbeat: NodeJS.Timeout;
  private readonly now: () => number;
  private readonly resumeGraceMs: number;
  readonly stats: HubStats = { clients: 0, dropped: 0, sent: 0 };

  constructor(options: HubOptions) {
    this.live = options.live;
    this.maxBuffered = options.maxBufferedBytes ?? 1024 * 1024;
    this.maxReplay = options.maxReplay ?? 5000;
    this.now = options.now ?? Date.now;
    this.resumeGraceMs = options.resumeGraceMs ?? 1000;
    this.heartbeat = setInterval(() => this.ping(), options.heartbeatMs ?? 30_000);
    this.heartbeat.unref();
  }

  /** A new connection; `since` (from ?since= on the URL) resumes at once without a round trip. */
  attach(socket: WebSocket, since: number | null = null): void {
    const hello = this.live.latestSeq();
    const client: Client = { socket, lastSent: hello, ready: false, alive: true, grace: null };
    this.clients.add(client);
    this.stats.clients = this.clients.size;
    socket.on('pong', () => {
      client.alive = true;
    });
    socket.on('message', (data) => this.onMessage(client, data.toString()));
    socket.on('close', () => {
      if (client.grace) clearTimeout(client.grace);
      this.clients.delete(client);
      this.stats.clients = this.clients.size;
    });
    socket.on('error', () => socket.terminate());
    this.send(client, JSON.stringify({ seq: hello, type: 'hello', at: new Date(this.now()).toISOString() }));
    if (since !== null) {
      this.resume(client, since);
      return;
    }
    client.grace = setTimeout(() => {
      client.grace = null;
      if (!client.ready) this.resume(client, hello, false);
    }, this.resumeGraceMs);
    client.grace.unref();
  }

  private onMessage(client: Client, text: string): void {
    let message: { type?: unknown; since?: unknown };
    try {
      message = JSON.parse(text) as typeof message;
    } catch {
      this.send(client, JSON.stringify({ seq: client.lastSent, type: 'error', at: new Date(this.now()).toISOString(), message: 'messages must be JSON' }));
      return;
    }
    if (message.type !== 'resume') return;
    const since = typeof message.since === 'number' && Number.isInteger(message.since) && message.since >= 0 ? message.since : null;
    if (since === null) {
      this.send(client, JSON.stringify({ seq: client.lastSent, type: 'error', at: new Date(this.now()).toISOString(), message: 'resume needs since: a whole seq number' }));
      return;
    }
    if (client.ready) return; // a client resumes once per connection
    this.resume(client, since);
  }

  /**
   * Replays every stored message after `since`, then lets the client follow live. better-sqlite3
   * reads synchronously, so no live message can slip in between the replay and the switch: the
   * client gets every seq after `since` exactly once, in order.
   */
  private resume(client: Client, since: number, announce = true): void {
    if (client.grace) {
      clearTimeout(client.grace);
      client.grace = null;
    }
    client.ready = true;
    const oldest = this.live.oldestSeq();
    const missed = this.live.countAfter(since);
    const latest = this.live.latestSeq();
    // since beyond the latest seq: the client knew another database; since older than storage: pruned
    if (missed > this.maxReplay || since > latest || (oldest !== null && since < oldest - 1)) {
      client.lastSent = latest;
      this.send(client, JSON.stringify({ seq: client.lastSent, type: 'resync', at: new Date(this.now()).toISOString(), message: 'too much was missed: reload the state, then follow live' }));
      return;
    }
    let cursor = since;
    for (;;) {
      const page = this.live.after(cursor, 500);
      for (const m of page) {
        if (!this.send(client, JSON.stringify(m))) return;
        cursor = m.seq;
      }
      if (page.length < 500) break;
    }
    client.lastSent = cursor;
    if (announce) this.send(client, JSON.stringify({ seq: client.lastSent, type: 'resumed', at: new Date(this.now()).toISOString() }));
  }

  /** Sends committed messages to every client that has not had them yet. */
  publish(messages: readonly { seq: number }[]): void {
    if (messages.length === 0 || this.clients.size === 0) return;
    // encoded once for every client, not once per client
    const encoded = messages.map((m) => ({ seq: m.seq, text: Buffer.from(JSON.stringify(m)) }));
    for (const client of this.clients) {
      if (!client.ready) continue;
      for (const m of encoded) {
        if (m.seq <= client.lastSent) continue;
        if (!this.send(client, m.text)) break;
        client.lastSent = m.seq;
      }
    }
  }

  private send(client: Client, text: string | Buffer): boolean {
    if (client.socket.readyState !== client.socket.OPEN) return false;
    if (client.socket.bufferedAmount + text.length > this.maxBuffered) {
      this.stats.dropped += 1;
      this.clients.delete(client);
      this.stats.clients = this.clients.size;
      client.socket.terminate();
      return false;
    }
    // a Buffer goes out as a text frame all the same: browsers parse it as JSON text
    client.socket.send(text, { binary: false });
    this.stats.sent += 1;
    return true;
  }

  private ping(): void {
    for (const client of this.clients) {
      if (!client.alive) {
        this.clients.delete(client);
        client.socket.terminate();
        continue;
      }
      client.alive = false;
      client.socket.ping();
    }
    this.stats.clients = this.clients.size;
  }

  close(): void {
    clearInterval(this.heartbeat);
    for (const client of this.clients) client.socket.close(1001, 'server shutting down');
    this.clients.clear();
  }
}
