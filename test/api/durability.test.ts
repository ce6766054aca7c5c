import { spawn, type ChildProcess } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { createAuthRepository } from '../../server/auth/repository.js';
import { createAuthService } from '../../server/auth/service.js';
import { createAuditRepository } from '../../server/audit/repository.js';
import { systemClock } from '../../server/clock.js';
import { openDatabase } from '../../server/db/database.js';
import { migrate } from '../../server/db/migrate.js';
import { removeDir } from '../helpers.js';

const ROOT = new URL('../../', import.meta.url).pathname;

/** A database with one line running one product and a checks token, made before any server runs. */
function prepare(file: string): string {
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

function startServer(file: string, port: number): Promise<ChildProcess> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, ['--import', 'tsx', 'server/main.ts', '--db', file, '--port', String(port), '--log-level', 'silent'], {
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

describe('durability under kill -9', () => {
  it('when the server is killed at random points during ingest, then every acknowledged check survives and the file is intact', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'heft-kill-'));
    const file = join(dir, 'heft.db');
    const token = prepare(file);
    const port = 21000 + Math.floor(Math.random() * 20000);
    const acknowledged = new Set<string>();
    let attempted = 0;
    const rounds = 5;
    for (let round = 0; round < rounds; round += 1) {
      const server = await startServer(file, port);
      let alive = true;
      const exited = new Promise<void>((r) => server.on('exit', () => r()));
      const killAfter = 150 + Math.floor(Math.random() * 500);
      const killer = setTimeout(() => {
        alive = false;
        server.kill('SIGKILL');
      }, killAfter);
      const writer = async () => {
        while (alive) {
          const clientId = randomUUID();
          attempted += 1;
          try {
            const res = await fetch(`http://127.0.0.1:${port}/api/lines/1/checks`, {
              method: 'POST',
              headers: { 'content-type': 'application/json', authorization: `Bearer ${token}` },
              body: JSON.stringify({ weights: [502, 503.5, 504, 501.5, 503], clientId }),
            });
            if (res.status === 201) acknowledged.add(clientId);
          } catch {
            // the server died mid-request: that check was never acknowledged
          }
        }
      };
      await Promise.all([writer(), writer(), writer(), writer()]);
      clearTimeout(killer);
      await exited;
    }
    expect(acknowledged.size).toBeGreaterThan(rounds);
    const db = openDatabase(file);
    expect(db.pragma('integrity_check', { simple: true })).toBe('ok');
    const stored = new Set((db.prepare('SELECT client_id FROM checks').all() as { client_id: string }[]).map((r) => r.client_id));
    const lost = [...acknowledged].filter((id) => !stored.has(id));
    expect(lost).toEqual([]);
    // no check without its packs
    expect(db.prepare('SELECT COUNT(*) AS n FROM checks c WHERE (SELECT COUNT(*) FROM packs p WHERE p.check_id = c.id) != c.n').get()).toEqual({ n: 0 });
    db.close();
    removeDir(dir);
    expect(attempted).toBeGreaterThanOrEqual(acknowledged.size);
  }, 120_000);
});
