import { copyFileSync, mkdirSync, mkdtempSync, readdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { randomUUID } from 'node:crypto';
import { describe, expect, test } from 'vitest';
import { openDatabase, type Db } from '../../server/db/database.js';
import { migrate, MIGRATIONS_DIR } from '../../server/db/migrate.js';
import { makeTestApp, postCheck, removeDir, setupLine, weightsWithMean } from '../helpers.js';

/**
 * Upgrades: a database made by every earlier migration level, with data written in that level's
 * own schema, opens in today's code. Each level is built here from the migration files up to it
 * (the files never change once landed, so these are the schemas the releases made).
 */

const FILES = readdirSync(MIGRATIONS_DIR).filter((f) => /^\d{3}_.*\.sql$/.test(f)).sort();
const HOUR = 3_600_000;
const START = Date.parse('2026-03-02T06:00:00Z');
const CHECKS = 30;

/** The detectors' state as today's engine writes it after a few checks, to store in an old database. */
async function detectorState(): Promise<{ detectors: string; previous: string | null; limitsKey: string; count: number }> {
  const t = await makeTestApp({ start: START });
  try {
    const { lineId } = await setupLine(t);
    for (let i = 0; i < 4; i += 1) {
      t.clock.advance(HOUR);
      await postCheck(t, lineId, weightsWithMean(503.5));
    }
    const row = t.db.prepare('SELECT detectors, previous, limits_key AS limitsKey FROM line_monitor_state').get() as { detectors: string; previous: string | null; limitsKey: string };
    return { ...row, count: (JSON.parse(row.detectors) as { count: number }).count };
  } finally {
    await t.close();
    removeDir(t.dir);
  }
}

const has = (db: Db, table: string) => db.prepare("SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = ?").get(table) !== undefined;

/** Writes a line, a product, a run, 30 checks with their packs and (from 003 on) an open alert with its signals and the line's detectors. */
function writeData(db: Db, state: Awaited<ReturnType<typeof detectorState>>): void {
  const now = START;
  db.prepare("INSERT INTO lines (id, code, name, packs_per_hour, created_at, updated_at) VALUES (1, 'L1', 'Line 1', 1000, ?, ?)").run(now, now);
  db.prepare("INSERT INTO products (id, code, name, nominal, unit, target, subgroup_size, sampling_minutes, sigma, created_at, updated_at) VALUES (1, 'P-L1', 'Bag 500 g', 500, 'g', 503, 5, 60, 2, ?, ?)").run(now, now);
  // from 009 on, the code keeps every product's settings as versions
  if (has(db, 'product_versions')) {
    db.prepare(
      `INSERT INTO product_versions (product_id, version, valid_from, code, name, nominal, unit, target, tare, subgroup_size, sampling_minutes, window_size, sigma, lsl, usl, entry_basis, cost_per_kg, rules)
       SELECT id, 1, created_at, code, name, nominal, unit, target, tare, subgroup_size, sampling_minutes, window_size, sigma, lsl, usl, entry_basis, cost_per_kg, rules FROM products`,
    ).run();
  }
  db.prepare('INSERT INTO runs (id, line_id, product_id, started_at) VALUES (1, 1, 1, ?)').run(now);
  const check = db.prepare(
    `INSERT INTO checks (id, line_id, run_id, product_id, client_id, taken_at, recorded_at, basis, n, mean, sd, range, target, below_t1, below_t2, window_checks, window_n, window_mean, window_sd)
     VALUES (?, 1, 1, 1, ?, ?, ?, 'net', 5, ?, 1.58, 4, 503, 0, 0, 1, 5, ?, 1.58)`,
  );
  const pack = db.prepare('INSERT INTO packs (check_id, position, net) VALUES (?, ?, ?)');
  for (let i = 1; i <= CHECKS; i += 1) {
    const at = now + i * HOUR;
    const mean = 503 + (i % 3) / 10;
    check.run(i, randomUUID(), at, at, mean, mean);
    for (const [k, w] of weightsWithMean(mean).entries()) pack.run(i, k, w);
  }
  if (!has(db, 'alerts')) return;
  db.prepare(
    `INSERT INTO alerts (id, line_id, run_id, kind, direction, severity, state, rules, opened_at, onset_at, onset_check_id, latest_check_id, updated_at)
     VALUES (1, 1, 1, 'mean-shift', 'up', 'watch', 'open', '["run-one-side"]', ?, ?, 20, 30, ?)`,
  ).run(now + 28 * HOUR, now + 20 * HOUR, now + 30 * HOUR);
  const signal = db.prepare("INSERT INTO signals (alert_id, check_id, rule, severity, direction, at) VALUES (1, ?, 'run-one-side', 'watch', 'up', ?)");
  for (const id of [28, 29, 30]) signal.run(id, now + id * HOUR);
  // from 008 on, the code keeps the count on the alert row as it writes the signals
  const alertColumns = (db.prepare('PRAGMA table_info(alerts)').all() as { name: string }[]).map((c) => c.name);
  if (alertColumns.includes('signal_count')) db.prepare('UPDATE alerts SET signal_count = 3 WHERE id = 1').run();
  const columns = (db.prepare('PRAGMA table_info(line_monitor_state)').all() as { name: string }[]).map((c) => c.name);
  const withPrevious = columns.includes('previous');
  db.prepare(
    `INSERT INTO line_monitor_state (line_id, run_id, limits_key, segment_start_check_id, detectors, updated_at${withPrevious ? ', previous' : ''})
     VALUES (1, 1, ?, 1, ?, ?${withPrevious ? ', ?' : ''})`,
  ).run(...[state.limitsKey, state.detectors, now + CHECKS * HOUR, ...(withPrevious ? [state.previous] : [])]);
}

describe('upgrades', () => {
  test.each(FILES.map((f, i) => [i + 1, f] as const))('when a database made at migration level %i (%s) is opened by today’s code, then it migrates, every check and alert reads back and the detectors resume', async (level) => {
    const state = await detectorState();
    const dir = mkdtempSync(join(tmpdir(), 'heft-upgrade-'));
    try {
      const old = join(dir, 'migrations');
      mkdirSync(old);
      for (const f of FILES.slice(0, level)) copyFileSync(join(MIGRATIONS_DIR, f), join(old, f));
      const file = join(dir, 'heft.db');
      const made = openDatabase(file);
      expect(migrate(made, old).applied).toEqual(FILES.slice(0, level));
      writeData(made, state);
      made.close();

      const t = await makeTestApp({ dir, users: true, start: START + (CHECKS + 1) * HOUR });
      try {
        const applied = t.db.prepare('SELECT name FROM schema_migrations ORDER BY version').all() as { name: string }[];
        expect(applied.map((r) => r.name)).toEqual(FILES);
        const admin = { cookie: t.cookies.admin };
        const checks = (await t.app.inject({ method: 'GET', url: '/api/lines/1/checks?limit=1000', headers: admin })).json().checks as { id: number; weights: number[] }[];
        expect(checks.map((c) => c.id)).toEqual(Array.from({ length: CHECKS }, (_, i) => i + 1));
        expect(checks.every((c) => c.weights.length === 5)).toBe(true);
        // the product's settings as they stood are its first version (migration 009 fills it in for older databases)
        const versions = (await t.app.inject({ method: 'GET', url: '/api/products/1/versions', headers: admin })).json().versions as { version: number; product: { target: number } }[];
        expect(versions.map((v) => [v.version, v.product.target])).toEqual([[1, 503]]);
        const status = (await t.app.inject({ method: 'GET', url: '/api/lines/1/status', headers: admin })).json().status;
        const alerts = (await t.app.inject({ method: 'GET', url: '/api/alerts', headers: admin })).json().alerts as { id: number; signalCount: number; signals: unknown[] }[];
        if (level >= 3) {
          // the alert, its signals and (migration 008) the count kept on its row
          expect(alerts.map((a) => [a.id, a.signalCount, a.signals.length])).toEqual([[1, 3, 3]]);
          expect(status.openAlerts.map((a: { id: number }) => a.id)).toEqual([1]);
          expect(status.detectors.points).toBe(state.count);
        } else {
          expect(alerts).toEqual([]);
          expect(status.detectors.points).toBe(0);
        }
        // and the line goes on taking checks where it stood
        const next = await postCheck(t, 1, weightsWithMean(503));
        expect(next.statusCode).toBe(201);
        const after = (await t.app.inject({ method: 'GET', url: '/api/lines/1/status', headers: admin })).json().status;
        expect(after.detectors.points).toBe(status.detectors.points + 1);
      } finally {
        await t.close();
      }
    } finally {
      removeDir(dir);
    }
  });

});
