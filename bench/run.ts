/**
 * npm run bench: Heft's figures on this machine, each beside a floor measured in the same run.
 * A real server process on 127.0.0.1, driven from other processes; every loop is bounded in count
 * and time. Prints one table (medians, with min–max over the rounds) and writes bench/results.md.
 */
import { execFileSync, spawn, type ChildProcess } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import http from 'node:http';
import { cpus, tmpdir } from 'node:os';
import { join } from 'node:path';
import { createAuditRepository } from '../server/audit/repository.js';
import { createAuthRepository } from '../server/auth/repository.js';
import { createAuthService } from '../server/auth/service.js';
import { buildApp } from '../server/app.js';
import { ManualClock, systemClock } from '../server/clock.js';
import { parseConfig } from '../server/config.js';
import { openDatabase, type Db } from '../server/db/database.js';
import { migrate } from '../server/db/migrate.js';
import { ensureWebBuilt } from '../server/web/build.js';

const ROOT = new URL('../', import.meta.url).pathname;
const ROUNDS = 3;
const INGEST_MS = 4000;
const LINES = 24;
const HOUR = 3_600_000;
const dir = mkdtempSync(join(tmpdir(), 'heft-bench-'));
// below the system's range of ephemeral ports (32768 up here): the load generators' own connections
// take those, and a server asked to listen on one of them in use failed the run now and then
const EPHEMERAL_FROM = Number(readFileSync('/proc/sys/net/ipv4/ip_local_port_range', 'utf8').trim().split(/\s+/)[0]) || 32768;
let nextPort = Math.max(1024, EPHEMERAL_FROM - 12000) + Math.floor(Math.random() * 10000);
const rows: { figure: string; heft: string; floor: string; ratio: string; note: string }[] = [];
const say = (s: string) => process.stdout.write(`${s}\n`);

// Where taskset and a second core exist: each server's main thread (its event loop) on core 0, the
// load generators and clients on core 1, so that the load never takes the event loop's CPU. A server's
// other threads (Heft's checkpoint thread and WAL flushes, V8's GC helpers; the floor's too) run on
// either core, as they do on a real machine. `whole` puts a whole server process on core 0 instead,
// helpers and all: the ingest figure is also shown that way, for comparison with earlier runs.
const PIN = existsSync('/usr/bin/taskset') && cpus().length >= 2;
type Placement = 'main-thread' | 'whole';
function node(side: 'server' | 'load', args: string[], placement: Placement = 'main-thread'): [string, string[]] {
  if (!PIN || (side === 'server' && placement === 'main-thread')) return [process.execPath, args];
  return ['/usr/bin/taskset', ['-c', side === 'server' ? '0' : '1', process.execPath, ...args]];
}

/** Once a server is up: its main thread to core 0, every other thread it has free to run on either core. */
function placeServer(child: ChildProcess, placement: Placement): void {
  if (!PIN || placement === 'whole' || child.pid === undefined) return;
  execFileSync('/usr/bin/taskset', ['--all-tasks', '-p', '-c', '0,1', String(child.pid)], { stdio: 'ignore' });
  execFileSync('/usr/bin/taskset', ['-p', '-c', '0', String(child.pid)], { stdio: 'ignore' });
}

async function startFloor(script: string, args: string[], placement: Placement = 'main-thread'): Promise<ChildProcess> {
  const child = spawn(...node('server', ['--import', 'tsx', script, ...args], placement), { cwd: ROOT, stdio: ['ignore', 'pipe', 'pipe'] });
  await waitFor(child, 'ready');
  placeServer(child, placement);
  return child;
}

const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)] as number;
const spread = (xs: number[], d = 0) => `${Math.min(...xs).toFixed(d)}–${Math.max(...xs).toFixed(d)}`;
const fmt = (xs: number[], unit: string, d = 0) => `${median(xs).toFixed(d)} ${unit} (${spread(xs, d)})`;
function addRow(figure: string, heft: number[], floor: number[] | null, unit: string, d: number, note = '', lowerIsBetter = false) {
  const ratio = floor ? (lowerIsBetter ? median(floor) / median(heft) : median(heft) / median(floor)) : null;
  rows.push({ figure, heft: fmt(heft, unit, d), floor: floor ? fmt(floor, unit, d) : '—', ratio: ratio === null ? '—' : `${ratio.toFixed(2)}×`, note });
}

// ------------------------------------------------------------------ seeding

/** 24 lines, each running a 500 g product, with `perLine` hourly checks of 5 packs ending now. */
function seed(file: string, perLine: number): { checksToken: string; boardToken: string; checks: number } {
  const db = openDatabase(file);
  db.pragma('synchronous = OFF'); // seeding only; the server reopens with FULL
  migrate(db);
  const now = Date.now();
  const start = now - perLine * HOUR;
  const product = db.prepare(
    `INSERT INTO products (code, name, nominal, unit, target, tare, subgroup_size, sampling_minutes, window_size, sigma, created_at, updated_at)
     VALUES (?, ?, 500, 'g', 503, 0, 5, 60, 10, 2, ?, ?)`,
  );
  const line = db.prepare('INSERT INTO lines (code, name, packs_per_hour, created_at, updated_at) VALUES (?, ?, 1200, ?, ?)');
  const run = db.prepare('INSERT INTO runs (line_id, product_id, started_at) VALUES (?, ?, ?)');
  const check = db.prepare(
    `INSERT INTO checks (line_id, run_id, product_id, client_id, taken_at, recorded_at, basis, n, mean, sd, range, target, below_t1, below_t2,
       window_checks, window_n, window_mean, window_sd) VALUES (?, ?, ?, ?, ?, ?, 'net', 5, ?, 1.58, 4, 503, 0, 0, 10, 50, 503, 1.9)`,
  );
  const pack = db.prepare('INSERT INTO packs (check_id, position, net) VALUES (?, ?, ?)');
  db.transaction(() => {
    for (let l = 1; l <= LINES; l += 1) {
      product.run(`B${l}`, `Bench bag ${l}`, start, start);
      line.run(`L${l}`, `Bench line ${l}`, start, start);
      run.run(l, l, start - HOUR);
    }
  })();
  let id = 0;
  const batch = 20_000;
  for (let from = 0; from < perLine; from += batch) {
    db.transaction(() => {
      for (let h = from; h < Math.min(perLine, from + batch); h += 1) {
        const at = start + h * HOUR;
        for (let l = 1; l <= LINES; l += 1) {
          id += 1;
          const base = 503 + ((id * 7919) % 21) / 10 - 1;
          check.run(l, l, l, randomUUID(), at, at, base);
          for (let k = 0; k < 5; k += 1) pack.run(id, k, base + k - 2);
        }
      }
    })();
  }
  const auth = createAuthService({ db, clock: systemClock, repo: createAuthRepository(db), audit: createAuditRepository(db), sessionIdleMs: 1e9, sessionMaxMs: 1e9 });
  const checksToken = auth.createToken({ name: 'bench scale', kind: 'checks', lineIds: Array.from({ length: LINES }, (_, i) => i + 1) }, 'bench').token;
  const boardToken = auth.createToken({ name: 'bench wall', kind: 'board', lineIds: [] }, 'bench').token;
  db.pragma('wal_checkpoint(TRUNCATE)');
  db.close();
  return { checksToken, boardToken, checks: id };
}

// ------------------------------------------------------------------ processes

function waitFor(child: ChildProcess, text: string, ms = 120_000): Promise<void> {
  return new Promise((resolve, reject) => {
    let out = '';
    const timer = setTimeout(() => reject(new Error(`timed out waiting for "${text}": ${out}`)), ms);
    const on = (d: Buffer) => {
      out += d.toString();
      if (out.includes(text)) {
        clearTimeout(timer);
        resolve();
      }
    };
    child.stdout?.on('data', on);
    child.stderr?.on('data', (d: Buffer) => (out += d.toString()));
    child.on('exit', (code) => reject(new Error(`exited ${code}: ${out}`)));
  });
}

async function startHeft(file: string, placement: Placement = 'main-thread'): Promise<{ child: ChildProcess; port: number; startupMs: number }> {
  const port = nextPort++;
  const started = performance.now();
  // HEFT_BENCH_PROFILE=<dir>: each Heft server writes a CPU profile there (read it with bench/profile-top.ts)
  const profile = process.env.HEFT_BENCH_PROFILE ? ['--cpu-prof', `--cpu-prof-dir=${process.env.HEFT_BENCH_PROFILE}`] : [];
  const child = spawn(...node('server', [...profile, 'dist/node/server/main.js', '--db', file, '--port', String(port), '--log-level', 'silent'], placement), { cwd: ROOT, stdio: ['ignore', 'pipe', 'pipe'] });
  await waitFor(child, 'Heft at');
  const startupMs = performance.now() - started;
  placeServer(child, placement);
  return { child, port, startupMs };
}

async function stop(child: ChildProcess): Promise<void> {
  if (child.exitCode !== null) return;
  const exited = new Promise<void>((r) => child.once('exit', () => r()));
  child.kill('SIGTERM');
  // a server writing its CPU profile on the way out needs longer
  await Promise.race([exited, new Promise((r) => setTimeout(r, process.env.HEFT_BENCH_PROFILE ? 60_000 : 5000))]);
  if (child.exitCode === null) child.kill('SIGKILL');
}

function run(script: string, args: string[]): Promise<string> {
  return new Promise((resolve, reject) => {
    const child = spawn(...node('load', ['--import', 'tsx', script, ...args]), { cwd: ROOT, stdio: ['ignore', 'pipe', 'inherit'] });
    let out = '';
    child.stdout.on('data', (d: Buffer) => (out += d.toString()));
    child.on('exit', (code) => (code === 0 ? resolve(out) : reject(new Error(`${script} exited ${code}: ${out}`))));
  });
}

function rssMb(pid: number, field: 'VmRSS' | 'VmHWM' = 'VmRSS'): number {
  const line = readFileSync(`/proc/${pid}/status`, 'utf8').split('\n').find((l) => l.startsWith(field));
  return Number(line?.split(/\s+/)[1] ?? 0) / 1024;
}

interface Load {
  rps: number;
  p50: number;
  p99: number;
  errors: number;
}

async function load(port: number, token: string, connections: number): Promise<Load> {
  const out = await run('bench/load.ts', [`http://127.0.0.1:${port}`, token, String(LINES), String(connections), String(INGEST_MS), '200000']);
  return JSON.parse(out.trim().split('\n').pop() as string) as Load;
}

function httpPost(port: number, path: string, body: unknown, token: string): Promise<{ status: number; body: string }> {
  const data = JSON.stringify(body);
  return new Promise((resolve, reject) => {
    const req = http.request({ host: '127.0.0.1', port, path, method: 'POST', headers: { 'content-type': 'application/json', 'content-length': Buffer.byteLength(data), authorization: `Bearer ${token}` } }, (res) => {
      let text = '';
      res.on('data', (d: Buffer) => (text += d.toString()));
      res.on('end', () => resolve({ status: res.statusCode ?? 0, body: text }));
    });
    req.on('error', reject);
    req.end(data);
  });
}

// ------------------------------------------------------------------ the figures

/** ROUNDS of the same load on the floor and on Heft, one after the other. */
async function ingestRounds(floorPort: number, heftPort: number, token: string, conns: number): Promise<{ f: Load[]; h: Load[] }> {
  const f: Load[] = [];
  const h: Load[] = [];
  for (let r = 0; r < ROUNDS; r += 1) {
    f.push(await load(floorPort, token, conns));
    h.push(await load(heftPort, token, conns));
  }
  return { f, h };
}

async function ingest(small: string, token: string): Promise<void> {
  say('ingest: floor (bare Fastify + zod + one FULL insert per request) and Heft, 10 and 50 connections');
  const floorFile = join(dir, 'floor.db');
  const floorPort = nextPort++;
  const floor = await startFloor('bench/floor.ts', [floorFile, String(floorPort)]);
  const heft = await startHeft(small);
  for (const conns of [10, 50]) {
    const { f, h } = await ingestRounds(floorPort, heft.port, token, conns);
    addRow(`ingest checks/s, ${conns} connections`, h.map((x) => x.rps), f.map((x) => x.rps), '/s', 0, `errors ${h.reduce((a, x) => a + x.errors, 0)}; goal ${conns === 50 ? '≥ 1.5×' : '≥ 0.8×'} floor`);
    addRow(`ingest p50 latency, ${conns} connections`, h.map((x) => x.p50), f.map((x) => x.p50), 'ms', 2, '', true);
    addRow(`ingest p99 latency, ${conns} connections`, h.map((x) => x.p99), f.map((x) => x.p99), 'ms', 2, '', true);
  }
  await stop(heft.child);
  await stop(floor);

  // the same at 50 connections with each server process wholly on core 0, as the bench ran before
  const wholeFloorPort = nextPort++;
  const wholeFloor = await startFloor('bench/floor.ts', [join(dir, 'floor-whole.db'), String(wholeFloorPort)], 'whole');
  const wholeHeft = await startHeft(small, 'whole');
  const { f, h } = await ingestRounds(wholeFloorPort, wholeHeft.port, token, 50);
  addRow('ingest checks/s, 50 connections, each server wholly on core 0', h.map((x) => x.rps), f.map((x) => x.rps), '/s', 0, `errors ${h.reduce((a, x) => a + x.errors, 0)}; helper threads share the event loop's core`);
  await stop(wholeHeft.child);
  await stop(wholeFloor);
}

/**
 * An automatic checkweigher: one line's packs posted 200 at a time, one post after another, as fast
 * as the server takes them (each forms 40 checks of 5). Against the floor's one insert per request
 * on one connection: a pack is a row there too. The goal is 200 packs/s per line, sustained.
 */
async function checkweigherStream(small: string, token: string): Promise<void> {
  say('checkweigher: posts of 200 packs on one line, one connection');
  const floorFile = join(dir, 'floor-packs.db');
  const floorPort = nextPort++;
  const floor = await startFloor('bench/floor.ts', [floorFile, String(floorPort)]);
  const heft = await startHeft(small);
  const h: number[] = [];
  const f: number[] = [];
  for (let r = 0; r < ROUNDS; r += 1) {
    f.push((await load(floorPort, token, 1)).rps);
    let packs = 0;
    let refused = 0;
    const started = performance.now();
    while (performance.now() - started < INGEST_MS) {
      const batch = Array.from({ length: 200 }, (_, i) => ({ weight: Math.round((503 + ((packs + i) % 13) / 4 - 1.5) * 10) / 10 }));
      const res = await httpPost(heft.port, '/api/lines/1/packs', { packs: batch, clientId: randomUUID() }, token);
      if (res.status === 201) packs += batch.length;
      else refused += 1;
    }
    if (refused > 0) throw new Error(`checkweigher bench: ${refused} posts refused`);
    h.push(packs / ((performance.now() - started) / 1000));
  }
  addRow('checkweigher packs/s, one line, posts of 200', h, f, '/s', 0, `goal ≥ 200 packs/s per line: ${(median(h) / 200).toFixed(0)}× that`);
  await stop(heft.child);
  await stop(floor);
}

/**
 * A line off target with nobody resolving its alert: 2,000 checks in a row all join one alert. The
 * last 200 against the first 200, sequential posts (the cost of a check, not of concurrency).
 */
async function firingRun(small: string, token: string): Promise<void> {
  say('firing run: 2,000 checks joining one open alert');
  const heft = await startHeft(small);
  const blocks: number[] = [];
  const sizes: number[] = [];
  for (let block = 0; block < 10; block += 1) {
    const started = performance.now();
    for (let i = 0; i < 200; i += 1) {
      const res = await httpPost(heft.port, '/api/lines/1/checks', { weights: [505, 506, 507, 508, 509], clientId: randomUUID() }, token);
      if (res.status !== 201) throw new Error(`firing run: ${res.status} ${res.body}`);
      if (i === 199) sizes.push(Buffer.byteLength(res.body));
    }
    blocks.push((performance.now() - started) / 200);
  }
  await stop(heft.child);
  const first = blocks[0] as number;
  const last = blocks[9] as number;
  rows.push({
    figure: 'a check of a firing run: checks 1,801–2,000 vs 1–200',
    heft: `${(last * 1000).toFixed(0)} µs`,
    floor: `${(first * 1000).toFixed(0)} µs`,
    ratio: `${(first / last).toFixed(2)}×`,
    note: `floor column: the first 200; answer ${sizes[0]} → ${sizes[9]} bytes; goal ≥ 0.9×`,
  });
}

/** Time per check through the engine alone (statistics, rules, SQL) inside one transaction: no fsync. */
async function engineTime(file: string): Promise<number> {
  const db: Db = openDatabase(file);
  migrate(db);
  const clock = new ManualClock(Date.now());
  const app = await buildApp({ db, clock, config: parseConfig([], {}, { db: file }) });
  const { monitor } = app.heft;
  const count = 2000;
  const jobs = Array.from({ length: count }, (_, i) => () => {
    clock.advance(1000);
    return monitor.recordCheck((i % LINES) + 1, { weights: [503.1, 502.4, 504, 503.3, 502.8], clientId: randomUUID() }, 'bench');
  });
  const started = performance.now();
  monitor.runBatch(jobs);
  const perCheck = ((performance.now() - started) * 1000) / count;
  await app.close();
  db.close();
  return perCheck;
}

async function history(small: string, big: string, bigChecks: number, token: string, bigToken: string): Promise<void> {
  say(`history independence: 1,000 vs ${bigChecks.toLocaleString('en')} stored checks`);
  const smallEngine: number[] = [];
  const bigEngine: number[] = [];
  for (let r = 0; r < ROUNDS; r += 1) {
    smallEngine.push(await engineTime(small));
    bigEngine.push(await engineTime(big));
  }
  const smallServer = await startHeft(small);
  const bigServer = await startHeft(big);
  const smallIngest: number[] = [];
  const bigIngest: number[] = [];
  for (let r = 0; r < ROUNDS; r += 1) {
    smallIngest.push((await load(smallServer.port, token, 50)).rps);
    bigIngest.push((await load(bigServer.port, bigToken, 50)).rps);
  }
  addRow('engine time per check (1 M stored vs 1 k)', bigEngine, smallEngine, 'µs', 0, 'floor column: the same with 1,000 stored', true);
  addRow('ingest at 50 connections (1 M stored vs 1 k)', bigIngest, smallIngest, '/s', 0, 'floor column: the same with 1,000 stored');
  await stop(smallServer.child);
  await stop(bigServer.child);
}

async function startup(small: string, big: string): Promise<void> {
  say('start-up: 5 years of hourly checks on 24 lines vs 1,000 checks');
  const s: number[] = [];
  const b: number[] = [];
  const idle: number[] = [];
  const loaded: number[] = [];
  for (let r = 0; r < ROUNDS; r += 1) {
    const one = await startHeft(small);
    s.push(one.startupMs);
    await new Promise((res) => setTimeout(res, 300));
    idle.push(rssMb(one.child.pid as number));
    await stop(one.child);
    const two = await startHeft(big);
    b.push(two.startupMs);
    await new Promise((res) => setTimeout(res, 300));
    loaded.push(rssMb(two.child.pid as number));
    await stop(two.child);
  }
  addRow('start-up to first answer (5 y history vs 1 k)', b, s, 'ms', 0, 'process start (built JavaScript), migrate, rebuild line state', true);
  addRow('RSS with 1 M checks stored (vs idle with 1 k)', loaded, idle, 'MB', 1, '', true);
}

/** N WebSocket clients in a process of their own; resolves once all are connected, then gives the last arrival. */
async function liveClients(url: string, n: number, token: string): Promise<{ lastArrival: Promise<number> }> {
  const child = spawn(...node('load', ['--import', 'tsx', 'bench/clients.ts', url, String(n), token, 'alert-']), { cwd: ROOT, stdio: ['ignore', 'pipe', 'inherit'] });
  let out = '';
  child.stdout.on('data', (d: Buffer) => (out += d.toString()));
  const exited = new Promise<void>((done) => child.on('exit', () => done()));
  await new Promise<void>((ready) => {
    const t = setInterval(() => {
      if (out.includes('ready')) {
        clearInterval(t);
        ready();
      }
    }, 10);
  });
  const lastArrival = exited.then(() => {
    const result = JSON.parse(out.trim().split('\n').pop() as string) as { last?: number };
    if (result.last === undefined) throw new Error(`fan-out: not every client got the message: ${out}`);
    return result.last;
  });
  return { lastArrival };
}

async function fanout(small: string, checksToken: string, boardToken: string): Promise<void> {
  say('fan-out: one alert to 100, 500 and 1,000 live clients (separate process) vs a bare ws broadcast');
  const heft = await startHeft(small);
  const floorPort = nextPort++;
  const messageBytes = 2500;
  const floor = await startFloor('bench/ws-floor.ts', [String(floorPort), String(messageBytes)]);
  let line = 1;
  let rssWithClients = 0;
  for (const n of [100, 500, 1000]) {
    const h: number[] = [];
    const f: number[] = [];
    for (let r = 0; r < ROUNDS; r += 1) {
      // Heft: a check far above the limits opens (or joins) an alert; the clients wait for its message
      const heftClients = await liveClients(`ws://127.0.0.1:${heft.port}/live`, n, boardToken);
      if (n === 1000 && r === 0) rssWithClients = rssMb(heft.child.pid as number);
      const sentAt = performance.timeOrigin + performance.now();
      const res = await httpPost(heft.port, `/api/lines/${line}/checks`, { weights: [530, 531, 529, 530, 530.5], clientId: randomUUID(), confirmSuspect: true }, checksToken);
      if (res.status !== 201) throw new Error(`fan-out check refused: ${res.status} ${res.body}`);
      line = (line % LINES) + 1;
      h.push((await heftClients.lastArrival) - sentAt);
      // floor: the same number of clients on a bare ws server, one broadcast of the same size
      const floorClients = await liveClients(`ws://127.0.0.1:${floorPort}/live`, n, '');
      const floorSent = performance.timeOrigin + performance.now();
      await new Promise<void>((done) => http.get({ host: '127.0.0.1', port: floorPort, path: '/broadcast' }, (resp) => resp.resume().on('end', () => done())));
      f.push((await floorClients.lastArrival) - floorSent);
    }
    addRow(`one alert to ${n} live clients`, h, f, 'ms', 1, n === 100 ? 'Heft: POST sent → last client has the alert message (includes storing and judging the check)' : '', true);
  }
  const idleRss = rssMb(heft.child.pid as number);
  rows.push({ figure: 'RSS with 1,000 live clients connected', heft: `${rssWithClients.toFixed(1)} MB`, floor: `${idleRss.toFixed(1)} MB after they left`, ratio: '—', note: '' });
  await stop(heft.child);
  await stop(floor);
}

async function exportsFigures(big: string): Promise<void> {
  say('exports: a week of 24 lines, and a year streamed');
  // the exports need the quality role: a person's session, so a quality user for the bench
  const db = openDatabase(big);
  const auth = createAuthService({ db, clock: systemClock, repo: createAuthRepository(db), audit: createAuditRepository(db), sessionIdleMs: 1e9, sessionMaxMs: 1e9 });
  if (!createAuthRepository(db).userByName('benchq')) await auth.addUser({ username: 'benchq', displayName: 'Bench quality', role: 'quality', secret: 'bench-quality-secret' }, 'bench');
  db.close();
  const heft = await startHeft(big);
  const signin = await new Promise<string>((resolve, reject) => {
    const data = JSON.stringify({ username: 'benchq', secret: 'bench-quality-secret' });
    const req = http.request({ host: '127.0.0.1', port: heft.port, path: '/api/session', method: 'POST', headers: { 'content-type': 'application/json', 'content-length': Buffer.byteLength(data) } }, (res) => {
      res.resume();
      resolve(String(res.headers['set-cookie']).split(';')[0] as string);
    });
    req.on('error', reject);
    req.end(data);
  });
  const get = (path: string) =>
    new Promise<{ bytes: number; seconds: number; growthMb: number }>((resolve, reject) => {
      const pid = heft.child.pid as number;
      const before = rssMb(pid);
      let peak = before;
      const sampler = setInterval(() => (peak = Math.max(peak, rssMb(pid))), 20);
      const started = performance.now();
      http
        .get({ host: '127.0.0.1', port: heft.port, path, headers: { cookie: signin } }, (res) => {
          let bytes = 0;
          res.on('data', (d: Buffer) => (bytes += d.length));
          res.on('end', () => {
            clearInterval(sampler);
            if (res.statusCode !== 200) reject(new Error(`export answered ${res.statusCode}`));
            else resolve({ bytes, seconds: (performance.now() - started) / 1000, growthMb: peak - before });
          });
        })
        .on('error', reject);
    });
  const now = Date.now();
  const week = `from=${new Date(now - 7 * 24 * HOUR).toISOString()}&to=${new Date(now).toISOString()}`;
  const year = `from=${new Date(now - 365 * 24 * HOUR).toISOString()}&to=${new Date(now).toISOString()}`;
  const w: number[] = [];
  const wBytes: number[] = [];
  const y: number[] = [];
  const yGrowth: number[] = [];
  const yBytes: number[] = [];
  for (let r = 0; r < ROUNDS; r += 1) {
    const a = await get(`/api/exports/checks.csv?${week}`);
    w.push(a.seconds * 1000);
    wBytes.push(a.bytes / 1024 / 1024);
    const b = await get(`/api/exports/packs.csv?${year}`);
    y.push(b.seconds);
    yGrowth.push(b.growthMb);
    yBytes.push(b.bytes / 1024 / 1024);
  }
  rows.push({ figure: 'export: a week of 24 lines (checks.csv)', heft: fmt(w, 'ms', 0), floor: '—', ratio: '—', note: `${median(wBytes).toFixed(1)} MB` });
  rows.push({ figure: 'export: a year of packs streamed (packs.csv)', heft: fmt(y, 's', 1), floor: '—', ratio: '—', note: `${median(yBytes).toFixed(0)} MB; peak server RSS growth ${fmt(yGrowth, 'MB', 1)}` });
  await stop(heft.child);
}

// ------------------------------------------------------------------ main

const began = performance.now();
await ensureWebBuilt();
// the servers measured are the built JavaScript production runs (npm start), not the sources through a loader
execFileSync(process.execPath, [join(ROOT, 'node_modules', 'typescript', 'bin', 'tsc'), '-p', join(ROOT, 'tsconfig.build.json')], { stdio: 'inherit' });
say(`seeding in ${dir} …`);
const small = join(dir, 'small.db');
const big = join(dir, 'big.db');
const smallSeed = seed(small, Math.ceil(1000 / LINES));
// `npm run bench -- --only-ingest`: the ingest and firing-run figures alone, without the 5-year database
const onlyIngest = process.argv.includes('--only-ingest');
let t0 = performance.now();
const bigSeed = onlyIngest ? { checks: 0, checksToken: '', boardToken: '' } : seed(big, 5 * 365 * 24);
say(`  ${bigSeed.checks.toLocaleString('en')} checks seeded in ${((performance.now() - t0) / 1000).toFixed(0)} s`);
t0 = performance.now();
if (!onlyIngest) await startup(small, big);
await ingest(small, smallSeed.checksToken);
await firingRun(small, smallSeed.checksToken);
await checkweigherStream(small, smallSeed.checksToken);
if (!onlyIngest) {
  await history(small, big, bigSeed.checks, smallSeed.checksToken, bigSeed.checksToken);
  await fanout(small, smallSeed.checksToken, smallSeed.boardToken);
  await exportsFigures(big);
}

const header = `| figure | Heft | floor | ratio | note |\n| --- | --- | --- | --- | --- |`;
const table = [header, ...rows.map((r) => `| ${r.figure} | ${r.heft} | ${r.floor} | ${r.ratio} | ${r.note} |`)].join('\n');
const when = new Date().toISOString();
const machine = `${process.version}, ${cpus().length} cores${PIN ? ", servers' main threads on core 0 (their other threads on either core), load on core 1" : ''}`;
say(`\n${table}\n\nmedians of ${ROUNDS} rounds (min–max); ratios are Heft ÷ floor (for times: floor ÷ Heft, so above 1 is better than the floor); ${when}, ${machine}; ${((performance.now() - began) / 1000).toFixed(0)} s in all`);
if (!onlyIngest) writeFileSync(join(ROOT, 'bench/results.md'), `# Latest bench run\n\n${when}, ${machine}\n\n${table}\n\nMedians of ${ROUNDS} rounds (min–max). Ratios: Heft ÷ floor; for times and memory floor ÷ Heft, so above 1 means better than the floor.\n`);
rmSync(dir, { recursive: true, force: true });
