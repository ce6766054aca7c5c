import { execFile, spawn, type ChildProcess } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { existsSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import Database from 'better-sqlite3';
import { describe, expect, test } from 'vitest';
import { backupsToKeep, isoWeek } from '../../server/db/backup.js';
import { BUILT_CLI, BUILT_SERVER } from '../build-server.js';
import { makeTestApp, postCheck, removeDir, setupLine, weightsWithMean } from '../helpers.js';

const run = promisify(execFile);

/** A database with one running line and a checks token, left on disk for a server process. */
async function seededFile(): Promise<{ dir: string; file: string; token: string; lineId: number }> {
  const t = await makeTestApp({ realTime: true });
  const { lineId } = await setupLine(t);
  const { token } = t.app.heft.auth.createToken({ name: 'scale', kind: 'checks', lineIds: [lineId] }, 'test');
  await t.close();
  return { dir: t.dir, file: t.file, token, lineId };
}

function startServer(file: string): Promise<{ child: ChildProcess; url: string }> {
  const child = spawn(process.execPath, [BUILT_SERVER, '--db', file, '--port', '0', '--log-level', 'silent'], { stdio: ['ignore', 'pipe', 'pipe'] });
  let out = '';
  return new Promise((resolve, reject) => {
    child.stdout?.on('data', (d: Buffer) => {
      out += d.toString();
      const url = /Heft at (http:\/\/\S+)/.exec(out)?.[1];
      if (url) resolve({ child, url });
    });
    child.stderr?.on('data', (d: Buffer) => (out += d.toString()));
    child.once('exit', (code) => reject(new Error(`server exited ${code}: ${out}`)));
  });
}

async function stopServer(child: ChildProcess): Promise<void> {
  const exited = new Promise<void>((r) => child.once('exit', () => r()));
  child.kill('SIGTERM');
  await exited;
}

const cli = (...args: string[]) => run(process.execPath, [BUILT_CLI, ...args], { encoding: 'utf8' });
const clientIdsIn = (file: string): Set<string> => {
  const db = new Database(file, { readonly: true });
  try {
    return new Set((db.prepare('SELECT client_id FROM checks').all() as { client_id: string }[]).map((r) => r.client_id));
  } finally {
    db.close();
  }
};

describe('backups', () => {
  test('when a backup is taken while checks keep arriving, then it holds every check acknowledged before it began and passes the integrity check', async () => {
    const { dir, file, token, lineId } = await seededFile();
    const server = await startServer(file);
    try {
      const acknowledged: string[] = [];
      let posting = true;
      const post = async () => {
        while (posting) {
          const clientId = randomUUID();
          const res = await fetch(`${server.url}/api/lines/${lineId}/checks`, {
            method: 'POST',
            headers: { 'content-type': 'application/json', authorization: `Bearer ${token}` },
            body: JSON.stringify({ weights: weightsWithMean(503), clientId }),
          });
          if (res.status === 201) acknowledged.push(clientId);
          else throw new Error(`check answered ${res.status}: ${await res.text()}`);
        }
      };
      const load = [post(), post(), post()];
      while (acknowledged.length < 100) await new Promise((r) => setImmediate(r));
      const before = [...acknowledged];
      const copy = join(dir, 'copy.db');
      const { stdout } = await cli('backup', '--db', file, '--to', copy);
      const duringBackup = acknowledged.length - before.length;
      posting = false;
      await Promise.all(load);
      expect(stdout).toMatch(/backup .*copy\.db: \d+ checks, \d+ bytes, integrity ok/);
      const held = clientIdsIn(copy);
      expect(before.filter((id) => !held.has(id))).toEqual([]);
      expect(Number(/: (\d+) checks/.exec(stdout)?.[1])).toBe(held.size);
      // the load went on while the copy was made: the server was not stopped for it
      expect(duringBackup).toBeGreaterThan(0);
    } finally {
      await stopServer(server.child);
      removeDir(dir);
    }
  }, 60_000);

  test('when a restore is asked for, then it refuses a running database and a damaged file, and otherwise brings the backup back', async () => {
    const { dir, file, token, lineId } = await seededFile();
    const server = await startServer(file);
    const copy = join(dir, 'copy.db');
    try {
      for (let i = 0; i < 5; i += 1) {
        const res = await fetch(`${server.url}/api/lines/${lineId}/checks`, { method: 'POST', headers: { 'content-type': 'application/json', authorization: `Bearer ${token}` }, body: JSON.stringify({ weights: weightsWithMean(503), clientId: randomUUID() }) });
        expect(res.status).toBe(201);
      }
      await cli('backup', '--db', file, '--to', copy);
      const refused = await cli('restore', '--from', copy, '--db', file).catch((err: { stderr: string }) => err);
      expect((refused as { stderr: string }).stderr).toMatch(/has .* open: stop it before restoring/);
      // one more check after the backup: the restore takes it away again
      await fetch(`${server.url}/api/lines/${lineId}/checks`, { method: 'POST', headers: { 'content-type': 'application/json', authorization: `Bearer ${token}` }, body: JSON.stringify({ weights: weightsWithMean(503), clientId: randomUUID() }) });
    } finally {
      await stopServer(server.child);
    }
    try {
      expect(clientIdsIn(file).size).toBe(6);
      const damaged = join(dir, 'damaged.db');
      writeFileSync(damaged, 'not a database at all, only some text that is long enough to look like a file');
      const bad = await cli('restore', '--from', damaged, '--db', file).catch((err: { stderr: string }) => err);
      expect((bad as { stderr: string }).stderr).toMatch(/damaged\.db (is not a SQLite database|fails SQLite's integrity check|could not be read)/);
      expect(clientIdsIn(file).size).toBe(6);

      const { stdout } = await cli('restore', '--from', copy, '--db', file);
      expect(stdout).toMatch(/restored .*: 5 checks/);
      expect(clientIdsIn(file).size).toBe(5);
      const again = await startServer(file);
      const health = await (await fetch(`${again.url}/api/health`)).json();
      expect(health.status).toBe('ok');
      await stopServer(again.child);
    } finally {
      removeDir(dir);
    }
  }, 60_000);

  test('when the server keeps daily backups, then it takes one a day and reports it on GET /api/health', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'heft-backups-'));
    const backupDir = join(dir, 'backups');
    const withBackups = await makeTestApp({ start: Date.parse('2026-03-02T06:00:00Z'), dir, users: true, config: { backupDir, backupKeepDaily: 3, backupKeepWeekly: 2 } });
    try {
      const { lineId } = await setupLine(withBackups);
      expect((await postCheck(withBackups, lineId, weightsWithMean(503))).statusCode).toBe(201);
      const none = (await withBackups.app.inject({ method: 'GET', url: '/api/health' })).json();
      expect(none.backup).toBeNull();
      const backups = withBackups.app.backups;
      expect(backups).not.toBeNull();
      const first = await backups?.runIfDue();
      expect(first?.checks).toBe(1);
      expect(existsSync(join(backupDir, 'heft-2026-03-02.db'))).toBe(true);
      expect(await backups?.runIfDue()).toBeNull(); // one a day
      const health = (await withBackups.app.inject({ method: 'GET', url: '/api/health' })).json();
      expect(health.backup).toMatchObject({ file: join(backupDir, 'heft-2026-03-02.db'), checks: 1, at: '2026-03-02T06:00:00.000Z' });
      expect(health.backup.bytes).toBeGreaterThan(0);
    } finally {
      await withBackups.close();
      removeDir(withBackups.dir);
    }
  });

  test('when old backups are pruned, then the newest daily ones and the newest of each recent week stay', () => {
    const days = Array.from({ length: 40 }, (_, i) => new Date(Date.UTC(2026, 0, 1 + i)).toISOString().slice(0, 10));
    const keep = backupsToKeep([...days.map((d) => `heft-${d}.db`), 'notes.txt'], 3, 2);
    // the 3 newest days (8–9 February, a Sunday and a Monday, and the 7th), plus the newest of the 2 newest ISO weeks
    expect([...keep].sort()).toEqual(['heft-2026-02-07.db', 'heft-2026-02-08.db', 'heft-2026-02-09.db']);
    const wider = backupsToKeep(days.map((d) => `heft-${d}.db`), 1, 3);
    expect([...wider].sort()).toEqual(['heft-2026-02-01.db', 'heft-2026-02-08.db', 'heft-2026-02-09.db']);
  });

  test('ISO 8601 week numbers of known days', () => {
    // source: ISO 8601 week-date rules (the week with the year's first Thursday is week 1); the days are from memory of the calendar
    expect(isoWeek('2026-01-01')).toBe('2026-W01'); // a Thursday
    expect(isoWeek('2021-01-03')).toBe('2020-W53'); // a Sunday of the last week of 2020
    expect(isoWeek('2024-12-30')).toBe('2025-W01'); // a Monday of the first week of 2025
    expect(isoWeek('2026-02-09')).toBe('2026-W07');
  });
});
