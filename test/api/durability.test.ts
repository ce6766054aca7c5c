import { randomUUID } from 'node:crypto';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { openDatabase } from '../../server/db/database.js';
import { prepareLineDatabase, startBuiltServer } from '../child-server.js';
import { removeDir } from '../helpers.js';
import { spreadChartLimits, standardisedMean } from '../../server/stats/control-limits.js';
import { freshSegment, judgePoint } from '../../server/stats/judge.js';
import { resolveRuleSet } from '../../server/stats/rule-set.js';
import { summarizeSample } from '../../server/stats/sample-summary.js';
import { mulberry32 } from '../../server/stats/random.js';

describe('durability under kill -9', () => {
  it('when the server is killed 20 times at random points during ingest, then every acknowledged check survives, the file is intact, and the statistics equal a recompute', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'heft-kill-'));
    const file = join(dir, 'heft.db');
    const token = prepareLineDatabase(file);
    // seeded, so a failing run can be repeated: the port and every kill time come from it
    const seed = 20261202;
    const uniform = mulberry32(seed);
    console.log(`durability: seed ${seed}`);
    const port = 21000 + Math.floor(uniform() * 20000);
    const acknowledged = new Set<string>();
    const attempted = new Set<string>();
    const rounds = 20;
    for (let round = 0; round < rounds; round += 1) {
      const server = await startBuiltServer(file, port);
      let alive = true;
      const exited = new Promise<void>((r) => server.on('exit', () => r()));
      const killAfter = 100 + Math.floor(uniform() * 300);
      const killer = setTimeout(() => {
        alive = false;
        server.kill('SIGKILL');
      }, killAfter);
      const writer = async () => {
        while (alive) {
          const clientId = randomUUID();
          attempted.add(clientId);
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
    // nothing was stored that was not sent, and at most the requests in flight at each kill (4 writers)
    // were stored without their answer arriving
    expect([...stored].filter((id) => !attempted.has(id))).toEqual([]);
    expect(stored.size - acknowledged.size).toBeLessThanOrEqual(4 * rounds);
    // no check without its packs
    expect(db.prepare('SELECT COUNT(*) AS n FROM checks c WHERE (SELECT COUNT(*) FROM packs p WHERE p.check_id = c.id) != c.n').get()).toEqual({ n: 0 });
    // every stored statistic equals a recompute from the stored packs, the rolling window included
    const rows = db.prepare('SELECT id, n, mean, sd, range, window_checks, window_n, window_mean, window_sd FROM checks ORDER BY id').all() as {
      id: number; n: number; mean: number; sd: number; range: number; window_checks: number; window_n: number; window_mean: number; window_sd: number;
    }[];
    const packsOf = db.prepare('SELECT net FROM packs WHERE check_id = ? ORDER BY position');
    const nets = rows.map((r) => (packsOf.all(r.id) as { net: number }[]).map((p) => p.net));
    rows.forEach((r, i) => {
      const own = summarizeSample(nets[i] as number[], 503);
      expect([r.n, r.mean, r.sd, r.range]).toEqual([own.n, own.mean, own.sd, own.range]);
      const windowPacks = nets.slice(Math.max(0, i - 9), i + 1).flat();
      const w = summarizeSample(windowPacks, 503);
      expect(r.window_checks).toBe(Math.min(10, i + 1));
      expect(r.window_n).toBe(w.n);
      expect(r.window_mean).toBeCloseTo(w.mean, 9);
    });
    // and the detectors' stored state equals replaying every check from scratch
    let segment = freshSegment();
    const set = resolveRuleSet();
    for (const [i, r] of rows.entries()) {
      const limits = spreadChartLimits(2, r.n);
      segment = judgePoint(set, segment, { z: standardisedMean(r.mean, r.n, { centre: 503, sigma: 2 }), spread: { value: limits.chart === 'S' ? r.sd : r.range, ucl: limits.ucl } }).state;
      expect(nets[i]).toHaveLength(5);
    }
    const detectors = JSON.parse((db.prepare('SELECT detectors FROM line_monitor_state WHERE line_id = 1').get() as { detectors: string }).detectors);
    expect(detectors).toEqual(JSON.parse(JSON.stringify(segment)));
    db.close();
    removeDir(dir);
  }, 180_000);
});
