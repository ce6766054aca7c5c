import { parseArgs } from 'node:util';
import { ScaleBridge, type BridgeLog } from './bridge.js';
import { serialSource, tcpSource, type LineSource, type SerialPortClass } from './line-sources.js';
import { patternProblem } from './reading.js';

export const SCALE_USAGE = `Usage: npm run heft -- scale --server URL --line CODE (--serial PATH | --tcp HOST:PORT) [options]

  Reads a scale's readings from a serial port or a network port, collects the packs of a check and
  posts each check to Heft with a checks token for the line. Checks that cannot be sent wait in a
  file queue and go oldest first when the server is back.

  --server URL        Heft's address, e.g. http://heft.plant:8080
  --token TOKEN       a checks token for the line (or HEFT_TOKEN, which keeps it out of the shell history)
  --line CODE         the line's code, e.g. L1
  --serial PATH       the serial port, e.g. /dev/ttyUSB0 or COM3
  --tcp HOST:PORT     a scale on a network port
  --baud N            serial speed (default: the line's scale profile, else 9600)
  --pattern REGEX     how to read a line: a regular expression with a named group (?<weight>…)
                      and optionally (?<unit>…) (default: the line's profile, else the first number)
  --packs N           packs per check (default: the product's)
  --queue FILE        the file queue (default ./heft-scale-queue-<line>.json)
  --log-level LEVEL   debug (every reading), info (default), warn or error
`;

const LEVELS = ['debug', 'info', 'warn', 'error'] as const;

/** `heft scale …`: parses the options, starts the bridge and runs until SIGINT or SIGTERM. */
export async function runScaleBridge(argv: string[]): Promise<void> {
  const { values } = parseArgs({
    args: argv,
    options: {
      server: { type: 'string' },
      token: { type: 'string' },
      line: { type: 'string' },
      serial: { type: 'string' },
      tcp: { type: 'string' },
      baud: { type: 'string' },
      pattern: { type: 'string' },
      packs: { type: 'string' },
      queue: { type: 'string' },
      'log-level': { type: 'string' },
      help: { type: 'boolean', short: 'h' },
    },
  });
  if (values.help) {
    process.stdout.write(SCALE_USAGE);
    return;
  }
  const need = (value: string | undefined, flag: string) => {
    if (!value) throw new Error(`${flag} is needed (see --help)`);
    return value;
  };
  const server = need(values.server, '--server').replace(/\/$/, '');
  const token = need(values.token ?? process.env.HEFT_TOKEN, '--token (or HEFT_TOKEN)');
  const lineCode = need(values.line, '--line');
  if (!values.serial === !values.tcp) throw new Error('give one of --serial PATH or --tcp HOST:PORT');
  const level = (values['log-level'] ?? 'info') as (typeof LEVELS)[number];
  if (!LEVELS.includes(level)) throw new Error(`--log-level must be one of ${LEVELS.join(', ')}`);
  const packs = values.packs === undefined ? undefined : Number(values.packs);
  if (packs !== undefined && !(Number.isInteger(packs) && packs >= 1 && packs <= 50)) throw new Error('--packs must be a whole number from 1 to 50');
  if (values.pattern !== undefined) {
    const problem = patternProblem(values.pattern);
    if (problem) throw new Error(`--pattern ${problem}`);
  }
  const log: BridgeLog = (at, message) => {
    if (LEVELS.indexOf(at) < LEVELS.indexOf(level)) return;
    process.stderr.write(`${new Date().toISOString()} ${at} ${message}\n`);
  };
  let source: LineSource;
  if (values.tcp) {
    const [host, port] = [values.tcp.slice(0, values.tcp.lastIndexOf(':')), Number(values.tcp.slice(values.tcp.lastIndexOf(':') + 1))];
    if (!host || !Number.isInteger(port) || port <= 0 || port > 65535) throw new Error('--tcp takes HOST:PORT');
    source = tcpSource(host, port);
  } else {
    const baudRate = values.baud === undefined ? 9600 : Number(values.baud);
    if (!Number.isInteger(baudRate) || baudRate < 110) throw new Error('--baud must be a whole number such as 9600');
    // loaded only when a serial port is used, so a TCP bridge needs no native binding
    const { SerialPort } = await import('serialport');
    source = serialSource(SerialPort as unknown as SerialPortClass, { path: values.serial as string, baudRate, dataBits: 8, parity: 'none', stopBits: 1 });
  }
  const bridge = new ScaleBridge({ server, token, lineCode, source, queueFile: values.queue ?? `./heft-scale-queue-${lineCode}.json`, pattern: values.pattern, packs, log });
  await bridge.start();
  log('info', `bridge for line ${lineCode} running; ${bridge.waiting} check(s) waiting from before`);
  await new Promise<void>((resolve) => {
    const stop = () => resolve();
    process.once('SIGINT', stop);
    process.once('SIGTERM', stop);
  });
  await bridge.stop();
  log('info', `stopped; ${bridge.waiting} check(s) wait in the queue for the next start`);
}
