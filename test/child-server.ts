import { spawn, type ChildProcess } from 'node:child_process';
import { createAuditRepository } from '../server/audit/repository.js';
import { createAuthRepository } from '../server/auth/repository.js';
import { createAuthService } from '../server/auth/service.js';
import { systemClock } from '../server/clock.js';
import { openDatabase } from '../server/db/database.js';
import { migrate } from '../server/db/migrate.js';
import { BUILT_SERVER } from './build-server.js';

const ROOT = new URL('../', import.meta.url).pathname;

/** Starts the built server as a child process on `port` over `file`; resolves once it listens. */
export function startBuiltServer(file: string, port: number, extraArgs: string[] = []): Promise<ChildProcess> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, [BUILT_SERVER, '--db', file, '--port', String(port), '--log-level', 'silent', ...extraArgs], {
      cwd: ROOT,
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    let out = '';
    const timer = setTimeout(() => reject(new Error(`server did not start: ${out}`)), 20_000);
    child.stdout?.on('data', (d: Buffer) => {
      out += d.toString();
      if (out.includes('Heft at')) {
        clearTimeout(timer);
        resolve(child);
      }
    });
    child.stderr?.on('data', (d: Buffer) => (out += d.toString()));
    child.on('exit', (code) => {
      clearTimeout(timer);
      if (!out.includes('Heft at')) reject(new Error(`server exited ${code}: ${out}`));
    });
  });
}

/**
 * A database with one line "L1" running one product (target 503 g, σ 2 g, 5 packs per check) and a
 * checks token for it, made before any server runs; returns the token.
 */
export function prepareLineDatabase(file: string): string {
  const db = openDatabase(file);
  migrate(db);
  const now = Date.now() - 60_000;
  db.prepare("INSERT INTO lines (code, name, created_at, updated_at) VALUES ('L1', 'Line 1', ?, ?)").run(now, now);
  db.prepare(
    `INSERT INTO products (code, name, nominal, unit, target, subgroup_size, sampling_minutes, sigma, created_at, updated_at)
     VALUES ('P', 'Bag', 500, 'g', 503, 5, 60, 2, ?, ?)`,
  ).run(now, now);
  db.prepare('INSERT INTO runs (line_id, product_id, started_at) VALUES (1, 1, ?)').run(now);
  const auth = createAuthService({ db, clock: systemClock, repo: createAuthRepository(db), audit: createAuditRepository(db), sessionIdleMs: 1e9, sessionMaxMs: 1e9 });
  const { token } = auth.createToken({ name: 'scale', kind: 'checks', lineIds: [1] }, 'test');
  db.close();
  return token;
}
