import type { Db } from '../db/database.js';

export interface Line {
  id: number;
  code: string;
  name: string;
  packsPerHour: number | null;
  /** Runs round the clock: the plant calendar never stops it. */
  continuous: boolean;
}

export interface Run {
  id: number;
  lineId: number;
  productId: number;
  startedAt: number;
  endedAt: number | null;
}

interface LineRow {
  id: number;
  code: string;
  name: string;
  packs_per_hour: number | null;
  continuous: number;
}
interface RunRow {
  id: number;
  line_id: number;
  product_id: number;
  started_at: number;
  ended_at: number | null;
}

const toLine = (r: LineRow): Line => ({ id: r.id, code: r.code, name: r.name, packsPerHour: r.packs_per_hour, continuous: r.continuous === 1 });
const toRun = (r: RunRow): Run => ({ id: r.id, lineId: r.line_id, productId: r.product_id, startedAt: r.started_at, endedAt: r.ended_at });

export function createLineRepository(db: Db) {
  const byId = db.prepare('SELECT * FROM lines WHERE id = ?');
  const all = db.prepare('SELECT * FROM lines ORDER BY code');
  const insert = db.prepare(
    'INSERT INTO lines (code, name, packs_per_hour, continuous, created_at, updated_at) VALUES (@code, @name, @packsPerHour, @continuous, @at, @at)',
  );
  const update = db.prepare('UPDATE lines SET code = @code, name = @name, packs_per_hour = @packsPerHour, continuous = @continuous, updated_at = @at WHERE id = @id');
  const openRun = db.prepare('SELECT * FROM runs WHERE line_id = ? AND ended_at IS NULL');
  const runById = db.prepare('SELECT * FROM runs WHERE id = ?');
  const endRun = db.prepare('UPDATE runs SET ended_at = @at WHERE id = @id');
  const startRun = db.prepare('INSERT INTO runs (line_id, product_id, started_at) VALUES (@lineId, @productId, @at)');
  const runsInRange = db.prepare(
    'SELECT * FROM runs WHERE line_id = @lineId AND started_at < @to AND (ended_at IS NULL OR ended_at > @from) ORDER BY started_at',
  );
  return {
    get(id: number): Line | null {
      const row = byId.get(id) as LineRow | undefined;
      return row ? toLine(row) : null;
    },
    list(): Line[] {
      return (all.all() as LineRow[]).map(toLine);
    },
    create(fields: Omit<Line, 'id'>, at: number): Line {
      const id = Number(insert.run({ ...fields, continuous: fields.continuous ? 1 : 0, at }).lastInsertRowid);
      return this.get(id) as Line;
    },
    update(line: Line, at: number): Line {
      update.run({ ...line, continuous: line.continuous ? 1 : 0, at });
      return this.get(line.id) as Line;
    },
    openRun(lineId: number): Run | null {
      const row = openRun.get(lineId) as RunRow | undefined;
      return row ? toRun(row) : null;
    },
    run(id: number): Run | null {
      const row = runById.get(id) as RunRow | undefined;
      return row ? toRun(row) : null;
    },
    endRun(runId: number, at: number): void {
      endRun.run({ id: runId, at });
    },
    startRun(lineId: number, productId: number, at: number): Run {
      const id = Number(startRun.run({ lineId, productId, at }).lastInsertRowid);
      return this.run(id) as Run;
    },
    runsInRange(lineId: number, from: number, to: number): Run[] {
      return (runsInRange.all({ lineId, from, to }) as RunRow[]).map(toRun);
    },
  };
}

export type LineRepository = ReturnType<typeof createLineRepository>;
