import type { ScaleProfileView } from '../../server/scales/contract.js';
import { inUnit, readingReader, type Reading } from '../../server/scales/reading.js';

/*
 * A serial scale on the entry tablet through the open Web Serial API (Chromium-based browsers):
 * asked for once, remembered by the browser (getPorts), opened again when the tablet wakes or the
 * cable comes back. The page gives each stable reading, in the product's unit, to `onWeight`.
 */

interface SerialPortLike extends EventTarget {
  readable: ReadableStream<Uint8Array> | null;
  open(options: { baudRate: number; dataBits?: number; stopBits?: number; parity?: string }): Promise<void>;
  close(): Promise<void>;
}
interface SerialLike extends EventTarget {
  requestPort(): Promise<SerialPortLike>;
  getPorts(): Promise<SerialPortLike[]>;
}

export interface ScaleHooks {
  /** The profile and the product's unit of the line the page is on, or null before a line is open. */
  current(): { profile: ScaleProfileView; unit: 'g' | 'kg' } | null;
  /** A stable weight, in the product's unit; returns false when no check is open to take it. */
  onWeight(value: number): boolean;
  /** A short line for the operator: connected, disconnected, a reading ignored. */
  say(text: string, tone: 'ok' | 'warn'): void;
}

const serial = (navigator as Navigator & { serial?: SerialLike }).serial;

/** True where the browser can talk to a serial port at all. */
export const canUseSerial = serial !== undefined;

/**
 * Connects the page to the scale; `button` asks for a port, and a remembered one opens by itself.
 * Call the answer's `lineReady` once the line's profile is known: a port granted before waits for it.
 */
export function setUpScale(button: HTMLButtonElement, hooks: ScaleHooks): { lineReady(): void } {
  if (!serial) return { lineReady: () => undefined };
  button.classList.remove('hidden');
  let port: SerialPortLike | null = null;
  let waiting: SerialPortLike | null = null;
  let reading = false;

  const read = async (p: SerialPortLike) => {
    const now = hooks.current();
    if (reading) return;
    if (!now) {
      waiting = p; // no line open yet: opened by lineReady()
      return;
    }
    waiting = null;
    const { profile } = now;
    try {
      await p.open({ baudRate: profile.baudRate, dataBits: profile.dataBits, stopBits: profile.stopBits, parity: profile.parity });
    } catch (err) {
      // already open (a second call) is fine; anything else is the operator's to see
      if (!(err instanceof DOMException && err.name === 'InvalidStateError')) {
        hooks.say(`the scale could not be opened (${(err as Error).message}) — type the weights or reconnect`, 'warn');
        return;
      }
    }
    port = p;
    reading = true;
    button.textContent = 'Scale connected';
    hooks.say('scale connected: each stable reading fills the next pack', 'ok');
    const parse = readingReader({ pattern: profile.pattern, unstablePattern: profile.unstablePattern, defaultUnit: profile.defaultUnit });
    const decoder = new TextDecoder();
    let buffer = '';
    const reader = p.readable?.getReader();
    try {
      for (;;) {
        if (!reader) break;
        const { value, done } = await reader.read();
        if (done) break;
        buffer += decoder.decode(value, { stream: true });
        const lines = buffer.split(/\r\n|\r|\n/);
        buffer = lines.pop() ?? '';
        for (const line of lines) if (line.length > 0) take(parse(line));
      }
    } catch {
      // the cable was pulled: the stream errors, and the 'disconnect' event says so
    } finally {
      reader?.releaseLock();
      reading = false;
      button.textContent = 'Connect scale';
    }
  };

  const take = (r: Reading) => {
    const now = hooks.current();
    if (!now || r.kind === 'unstable' || r.kind === 'empty') return;
    if (r.kind === 'unreadable') {
      hooks.say(`a reading was not understood (${r.reason})`, 'warn');
      return;
    }
    if (!hooks.onWeight(inUnit(r.value, r.unit, now.unit))) hooks.say(`reading ${r.value} ${r.unit} ignored: no check is open for it`, 'warn');
  };

  button.addEventListener('click', () => {
    serial
      .requestPort()
      .then((p) => read(p))
      .catch(() => hooks.say('no scale was chosen — type the weights, or connect again', 'warn'));
  });
  serial.addEventListener('disconnect', () => {
    if (port === null) return;
    reading = false;
    button.textContent = 'Connect scale';
    hooks.say('scale disconnected — type the weights or reconnect', 'warn');
  });
  // the cable is back, or the tablet woke: a port this page was granted before opens again
  serial.addEventListener('connect', (event) => {
    const target = event.target as Partial<SerialPortLike> | null;
    const again = target && typeof target.open === 'function' ? (target as SerialPortLike) : port;
    if (again) void read(again);
  });
  void serial.getPorts().then((ports) => {
    if (ports[0]) void read(ports[0]);
  });
  return {
    lineReady() {
      if (waiting) void read(waiting);
    },
  };
}
