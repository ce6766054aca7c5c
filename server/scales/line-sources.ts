import { connect, type Socket } from 'node:net';

/** Where a scale's lines of text come from: a serial port or a network port, reconnected when lost. */
export interface LineSource {
  start(onLine: (line: string) => void, onState: (state: 'connected' | 'disconnected', detail: string) => void): void;
  stop(): Promise<void>;
}

const BACKOFF_START_MS = 500;
const BACKOFF_MAX_MS = 30_000;

/** Cuts a stream of text into lines at CR, LF or CR LF (scales differ; the profile need not say). */
export function lineSplitter(onLine: (line: string) => void): (chunk: string) => void {
  let buffer = '';
  return (chunk) => {
    buffer += chunk;
    const parts = buffer.split(/\r\n|\r|\n/);
    buffer = parts.pop() ?? '';
    for (const p of parts) if (p.length > 0) onLine(p);
  };
}

/** A scale on a network port (a serial-to-Ethernet converter, or a scale with its own port). */
export function tcpSource(host: string, port: number): LineSource {
  let socket: Socket | null = null;
  let stopped = false;
  let wait = BACKOFF_START_MS;
  let timer: NodeJS.Timeout | null = null;
  return {
    start(onLine, onState) {
      const open = () => {
        if (stopped) return;
        const split = lineSplitter(onLine);
        socket = connect({ host, port });
        socket.setEncoding('latin1');
        socket.on('connect', () => {
          wait = BACKOFF_START_MS;
          onState('connected', `${host}:${port}`);
        });
        socket.on('data', (chunk: string) => split(chunk));
        socket.on('error', () => undefined); // 'close' follows and reconnects
        socket.on('close', () => {
          if (stopped) return;
          onState('disconnected', `${host}:${port}; trying again in ${wait} ms`);
          timer = setTimeout(open, wait);
          wait = Math.min(wait * 2, BACKOFF_MAX_MS);
        });
      };
      open();
    },
    async stop() {
      stopped = true;
      if (timer) clearTimeout(timer);
      socket?.destroy();
    },
  };
}

/** The parts of the serialport package's port class the bridge uses (the mock binding's class has them too). */
export interface SerialPortLike {
  open(callback: (err: Error | null) => void): void;
  close(callback?: (err: Error | null) => void): void;
  on(event: 'data', listener: (chunk: Buffer) => void): this;
  on(event: 'close' | 'error', listener: (err?: Error) => void): this;
  readonly isOpen: boolean;
}
export type SerialPortClass = new (options: { path: string; baudRate: number; dataBits: 7 | 8; parity: 'none' | 'even' | 'odd'; stopBits: 1 | 2; autoOpen: false }) => SerialPortLike;

/** A scale on a serial port (RS-232 or USB serial), through the serialport package. */
export function serialSource(
  PortClass: SerialPortClass,
  options: { path: string; baudRate: number; dataBits: 7 | 8; parity: 'none' | 'even' | 'odd'; stopBits: 1 | 2 },
  onOpen?: (port: SerialPortLike) => void,
): LineSource {
  let port: SerialPortLike | null = null;
  let stopped = false;
  let wait = BACKOFF_START_MS;
  let timer: NodeJS.Timeout | null = null;
  return {
    start(onLine, onState) {
      const retry = (why: string) => {
        if (stopped) return;
        onState('disconnected', `${options.path}: ${why}; trying again in ${wait} ms`);
        timer = setTimeout(open, wait);
        wait = Math.min(wait * 2, BACKOFF_MAX_MS);
      };
      const open = () => {
        if (stopped) return;
        const split = lineSplitter(onLine);
        const p = new PortClass({ ...options, autoOpen: false });
        port = p;
        p.on('data', (chunk: Buffer) => split(chunk.toString('latin1')));
        p.on('error', () => undefined);
        p.on('close', () => retry('the port closed'));
        p.open((err) => {
          if (err) return retry(err.message);
          wait = BACKOFF_START_MS;
          onState('connected', options.path);
          onOpen?.(p);
        });
      };
      open();
    },
    async stop() {
      stopped = true;
      if (timer) clearTimeout(timer);
      const p = port;
      if (p?.isOpen) await new Promise<void>((r) => p.close(() => r()));
    },
  };
}
