/** The pages' live feed client: reconnects by itself and resumes from the last seq it saw. */

import type { LiveEvent, LiveMessage as FeedMessage } from '../../server/live/messages.js';

/** A numbered message of the feed (the server's live message contract): what the callbacks get. */
export type LiveMessage = LiveEvent;

export interface LiveCallbacks {
  onMessage: (m: LiveMessage) => void;
  /** connected: following live; lastMessageAt: when anything last arrived (for "last update 40 s ago"). */
  onState: (state: { connected: boolean; lastMessageAt: number | null }) => void;
  /** Too much was missed to replay: reload everything over HTTP. */
  onResync: () => void;
}

export class LiveClient {
  private socket: WebSocket | null = null;
  private lastSeq: number | null = null;
  private lastMessageAt: number | null = null;
  private retry = 0;
  private stopped = false;
  private timer: number | null = null;

  constructor(private readonly callbacks: LiveCallbacks) {}

  start(): void {
    this.stopped = false;
    this.open();
  }

  stop(): void {
    this.stopped = true;
    if (this.timer !== null) window.clearTimeout(this.timer);
    this.socket?.close();
  }

  private open(): void {
    const scheme = location.protocol === 'https:' ? 'wss' : 'ws';
    const since = this.lastSeq === null ? '' : `?since=${this.lastSeq}`;
    const socket = new WebSocket(`${scheme}://${location.host}/live${since}`);
    this.socket = socket;
    socket.onmessage = (event) => {
      const m = JSON.parse(String(event.data)) as FeedMessage;
      this.lastMessageAt = Date.now();
      if (m.type === 'hello') {
        if (this.lastSeq === null) this.lastSeq = m.seq;
        this.retry = 0;
        this.callbacks.onState({ connected: true, lastMessageAt: this.lastMessageAt });
        return;
      }
      if (m.type === 'resync') {
        this.lastSeq = m.seq;
        this.callbacks.onResync();
        return;
      }
      if (m.type === 'resumed' || m.type === 'error') return;
      if (this.lastSeq !== null && m.seq <= this.lastSeq) return;
      this.lastSeq = m.seq;
      this.callbacks.onMessage(m);
    };
    socket.onclose = () => {
      this.callbacks.onState({ connected: false, lastMessageAt: this.lastMessageAt });
      if (this.stopped) return;
      const delay = Math.min(10_000, 500 * 2 ** this.retry);
      this.retry += 1;
      this.timer = window.setTimeout(() => this.open(), delay);
    };
  }
}
