import { randomUUID } from 'node:crypto';
import { FileQueue } from './bridge-queue.js';
import type { LineSource } from './line-sources.js';
import { inUnit, readingReader, type Reading, type ScaleUnit } from './reading.js';

export type BridgeLog = (level: 'debug' | 'info' | 'warn' | 'error', message: string) => void;

export interface BridgeOptions {
  /** Heft's address, e.g. http://heft.plant:8080 */
  server: string;
  /** A checks token for the line. */
  token: string;
  lineCode: string;
  source: LineSource;
  queueFile: string;
  /** Overrides the line's profile: a pattern with a named group `weight`. */
  pattern?: string;
  /** Overrides the product's packs per check. */
  packs?: number;
  log: BridgeLog;
  fetch?: typeof fetch;
  /** The longest wait between two attempts to reach the server. */
  maxRetryMs?: number;
}

interface LineInfo {
  id: number;
  product: { unit: ScaleUnit; subgroupSize: number; entryBasis: 'net' | 'gross' } | null;
  scale: { pattern: string | null; unstablePattern: string | null; defaultUnit: ScaleUnit };
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));


/** How many stored client ids a bridge keeps in memory (for its log and tests). */
export const STORED_KEPT = 100;
/**
 * The scale bridge: reads a scale's lines, collects a check's packs, and posts each check with a
 * client id so a retried post is stored once. Checks wait in a file queue until the server has
 * them, and go oldest first; a refused check (4xx) is logged and set aside, not retried forever.
 */
export class ScaleBridge {
  private readonly queue: FileQueue;
  private readonly fetch: typeof fetch;
  private line: LineInfo | null = null;
  private read: ((text: string) => Reading) | null = null;
  private collected: number[] = [];
  private stopped = false;
  private wake: (() => void) | null = null;
  private sending: Promise<void> | null = null;
  private refresher: NodeJS.Timeout | null = null;
  /** How many checks the server stored since the start. */
  storedCount = 0;
  /** The client ids of the last STORED_KEPT of them, oldest first (a bridge runs for months: not all). */
  readonly stored: string[] = [];

  constructor(private readonly o: BridgeOptions) {
    this.queue = new FileQueue(o.queueFile);
    this.fetch = o.fetch ?? fetch;
  }

  get waiting(): number {
    return this.queue.length;
  }

  /** Finds the line (retrying until the server answers), starts reading the scale and sending. */
  async start(): Promise<void> {
    this.line = await this.untilAnswered(() => this.lookUpLine());
    this.applyLine(this.line);
    this.o.source.start(
      (text) => this.onLine(text),
      (state, detail) => this.o.log(state === 'connected' ? 'info' : 'warn', `scale ${state}: ${detail}`),
    );
    this.sending = this.sendLoop();
    // a changeover on the line changes the packs per check and the unit: look again every minute
    this.refresher = setInterval(() => {
      this.lookUpLine()
        .then((line) => {
          this.line = line;
          this.applyLine(line);
        })
        .catch((err: Error) => this.o.log('debug', `the line could not be looked up again: ${err.message}`));
    }, 60_000);
    this.refresher.unref();
  }

  async stop(): Promise<void> {
    this.stopped = true;
    if (this.refresher) clearInterval(this.refresher);
    this.wake?.();
    await this.o.source.stop();
    await this.sending;
  }

  private applyLine(line: LineInfo): void {
    this.read = readingReader({ pattern: this.o.pattern ?? line.scale.pattern, unstablePattern: line.scale.unstablePattern, defaultUnit: line.scale.defaultUnit });
  }

  private async lookUpLine(): Promise<LineInfo> {
    const res = await this.fetch(`${this.o.server}/api/scale-lines`, { headers: { authorization: `Bearer ${this.o.token}` }, signal: AbortSignal.timeout(10_000) });
    if (res.status === 401 || res.status === 403) throw new Refused(`the token was refused (${res.status}): ${await res.text()}`);
    if (!res.ok) throw new Error(`the server answered ${res.status}`);
    const { lines } = (await res.json()) as { lines: (LineInfo & { code: string })[] };
    const line = lines.find((l) => l.code === this.o.lineCode);
    if (!line) throw new Refused(`this token may not post checks for line ${this.o.lineCode} (it may for: ${lines.map((l) => l.code).join(', ') || 'none'})`);
    return line;
  }

  private onLine(text: string): void {
    const reading = this.read?.(text) ?? { kind: 'unreadable' as const, reason: 'the line is not known yet' };
    this.o.log('debug', `reading ${JSON.stringify(text)} → ${JSON.stringify(reading)}`);
    if (reading.kind !== 'weight') {
      if (reading.kind === 'unreadable') this.o.log('warn', `a line from the scale was not read: ${reading.reason}`);
      return;
    }
    const product = this.line?.product;
    if (!product) {
      this.o.log('warn', `no product is running on line ${this.o.lineCode}: the reading ${reading.value} ${reading.unit} was not kept`);
      return;
    }
    this.collected.push(inUnit(reading.value, reading.unit, product.unit));
    const n = this.o.packs ?? product.subgroupSize;
    if (this.collected.length < n) return;
    const check = { clientId: randomUUID(), weights: this.collected.splice(0, n), takenAt: new Date().toISOString() };
    this.queue.push(check);
    this.o.log('info', `check of ${n} packs collected (${this.queue.length} to send)`);
    this.wake?.();
  }

  private async sendLoop(): Promise<void> {
    let wait = 500;
    while (!this.stopped) {
      const next = this.queue.oldest();
      if (!next) {
        await new Promise<void>((r) => (this.wake = r));
        this.wake = null;
        continue;
      }
      try {
        await this.post(next);
        this.queue.remove(next.clientId);
        wait = 500;
      } catch (err) {
        if (err instanceof Refused) {
          this.o.log('error', `check ${next.clientId} was refused and set aside: ${err.message}`);
          this.queue.remove(next.clientId);
          continue;
        }
        this.o.log('warn', `the server could not be reached (${(err as Error).message}); ${this.queue.length} check(s) wait, trying again in ${wait} ms`);
        await Promise.race([sleep(wait), new Promise<void>((r) => (this.wake = r))]);
        this.wake = null;
        wait = Math.min(wait * 2, this.o.maxRetryMs ?? 30_000);
      }
    }
  }

  private async post(check: { clientId: string; weights: number[]; takenAt: string }): Promise<void> {
    const line = this.line as LineInfo;
    const res = await this.fetch(`${this.o.server}/api/lines/${line.id}/checks`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', authorization: `Bearer ${this.o.token}` },
      // a bridge reads real weights, not typed ones: a far-off pack is a real pack, not a slipped decimal
      body: JSON.stringify({ ...check, source: 'bridge', basis: line.product?.entryBasis ?? 'net', confirmSuspect: true }),
      signal: AbortSignal.timeout(10_000),
    });
    if (res.status === 200 || res.status === 201) {
      this.storedCount += 1;
      this.stored.push(check.clientId);
      if (this.stored.length > STORED_KEPT) this.stored.shift();
      this.o.log('info', `check stored (${res.status === 201 ? 'new' : 'already there'})`);
      return;
    }
    const body = await res.text();
    if (res.status >= 400 && res.status < 500 && res.status !== 408 && res.status !== 429) throw new Refused(`${res.status} ${body}`);
    throw new Error(`the server answered ${res.status}`);
  }

  private async untilAnswered<T>(attempt: () => Promise<T>): Promise<T> {
    let wait = 500;
    for (;;) {
      try {
        return await attempt();
      } catch (err) {
        if (err instanceof Refused || this.stopped) throw err;
        this.o.log('warn', `the server could not be reached (${(err as Error).message}); trying again in ${wait} ms`);
        await sleep(wait);
        wait = Math.min(wait * 2, this.o.maxRetryMs ?? 30_000);
      }
    }
  }
}

/** An answer that will not change by asking again (a bad token, a refused check). */
class Refused extends Error {}
